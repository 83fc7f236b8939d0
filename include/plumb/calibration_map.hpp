#pragma once
// A calibration map: fitted on labelled scores, maps a raw score to a
// probability, and writes and reads itself as JSON. The CLI only ever sees
// this interface; each kind of map lives in its own file under src/core/maps.
#include <array>
#include <cstddef>
#include <memory>
#include <nlohmann/json.hpp>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/scale.hpp"

namespace plumb {

// The labelled rows a map is fitted on. `label` holds 0 or 1; `weight` is
// empty (all 1) or holds finite weights >= 0. All spans have equal length.
struct FitData {
  std::span<const double> score;
  std::span<const double> label;
  std::span<const double> weight;
  Scale scale = Scale::probability;
};

// Options for every kind; a kind reads only its own.
struct MapOptions {
  // isotonic: between fitted blocks, interpolate linearly (true) or hold the
  // value of the block to the left (false).
  bool isotonic_interpolate = true;
  // platt: Platt's (1999) smoothed targets instead of 0/1 labels.
  bool platt_smoothed_targets = true;
  // beta: "full" (a, b, c free), "midpoint" (m = 1/2 fixed, so c = (a-b) ln 2)
  // or "shared" (a = b: a logistic map on the log-odds).
  std::string beta_form = "full";
  // histogram: number of equal-mass bins (at most the number of distinct scores).
  int histogram_bins = 10;
  // centered_isotonic: add the minimal slope so that distinct scores get
  // distinct probabilities (the strict form), or not (weak).
  bool centered_strict = false;
  // cross_venn_abers: the number of folds the rows are dealt into.
  int venn_folds = 5;
  // Not a user's choice, and never recorded: false leaves out the
  // diagnostics that pass over the fit rows once more after the fit (the
  // log loss, then NaN, and the clipped rows, then 0). cross_fit's fold
  // maps, whose diagnostics nothing shows, are fitted so.
  bool row_diagnostics = true;
};

// What the fit did, for the artifact and for `inspect`.
struct FitDiagnostics {
  int iterations = 0;
  bool converged = true;
  double log_loss = 0.0;      // weighted mean log loss of the fitted map on the fit rows
  std::size_t clipped = 0;    // fit rows whose probability was clipped before a log-odds
  std::vector<std::string> notes;  // plain-language remarks (fallbacks taken, restrictions)
};

// The result of mapping one score.
struct Mapped {
  double probability;
  bool outside_fit_range = false;  // the score lay outside the fitted scores and was clamped
  bool clipped = false;            // a probability score of (nearly) 0 or 1 was clipped
};

class CalibrationMap {
 public:
  virtual ~CalibrationMap() = default;

  // The kind's name, as in `--map` and the artifact ("isotonic", "platt", ...).
  virtual std::string_view kind() const noexcept = 0;
  // The scale of the scores the map was fitted on and expects.
  virtual Scale scale() const noexcept = 0;

  // Precondition: valid_on_scale(score, scale()). Returns a probability in [0, 1].
  virtual Mapped map(double score) const noexcept = 0;
  double operator()(double score) const noexcept { return map(score).probability; }

  // The kind's parameters as a JSON object; load_map() inverts this exactly.
  virtual nlohmann::json parameters() const = 0;
  // True when the map is non-decreasing in the score: exactly for the
  // piecewise kinds (isotonic, histogram); for the kinds that end in the
  // logistic function, up to its rounding (between neighbouring doubles the
  // probability may fall by an ulp or two, as e / (1 + e) rounds).
  virtual bool monotone() const noexcept = 0;
  // True when the map decreases as a whole, not merely somewhere (the sign a
  // reversed score or a wrong positive label leaves). By default: not
  // monotone(), which is exact for the kinds that are monotone one way or the
  // other (platt, temperature). A histogram map decreases as a whole when the
  // weighted rank correlation of score and bin frequency over the fitted rows
  // is negative (HistogramMap::decreases_overall()).
  virtual bool decreases_overall() const noexcept { return !monotone(); }
  // True when map() returns exactly 0 or exactly 1 for some fitted score (a
  // bin or block holding rows of one class only): the log loss of any later
  // row with the contrary outcome there is infinite.
  virtual bool reaches_zero_or_one() const noexcept { return false; }
  // True when the map gives an interval of probabilities beside its
  // probability (the Venn-Abers kinds: [p0, p1]); apply's --interval and
  // report's interval width ask it.
  virtual bool has_interval() const noexcept { return false; }
  // The interval at `score`, lower end first, when has_interval(); for a map
  // without one, the probability twice. Same precondition as map().
  virtual std::array<double, 2> interval(double score) const noexcept {
    const double p = map(score).probability;
    return {p, p};
  }

  const FitDiagnostics& diagnostics() const noexcept { return diagnostics_; }
  // Used when a map is read back from an artifact, whose diagnostics were
  // recorded at fit time.
  void restore_diagnostics(FitDiagnostics diagnostics) { diagnostics_ = std::move(diagnostics); }

 protected:
  FitDiagnostics diagnostics_;
};

// The kind with its indefinite article, for messages: "an isotonic",
// "a platt" (a vowel letter first takes "an").
std::string kind_with_article(std::string_view kind);

// The kinds plumb can fit, in the order the help text lists them (kinds that
// are only ever loaded, such as fold_average, are not among them).
std::span<const std::string_view> map_kinds() noexcept;
// Whether `kind` accepts scores on `scale`.
bool accepts_scale(std::string_view kind, Scale scale) noexcept;

// The rows merged by score: for each distinct score (ascending) an entry of
// label 0 with the weight of its negative rows and one of label 1 with the
// weight of its positive rows (each only when positive). Every kind's fit
// depends on the rows only through these sums. Rows of one score are summed
// in input order; already sorted input is not re-sorted.
struct ScoreTally {
  std::vector<double> score, label, weight;
};
ScoreTally tally_by_score(const FitData& data);

// Fit a map of `kind` to `data`. Every kind is fitted on tally_by_score(data),
// never on the rows, so a map fitted from a tally of the same rows
// (fit_map_on_tally, plumb/tally.hpp) is bit-identical. Throws plumb::Error: usage for an unknown
// kind or a scale the kind does not accept; fit when the data cannot support
// the fit (no rows of positive weight, only one class). Precondition: every
// score is valid on data.scale and every label is 0 or 1.
std::unique_ptr<CalibrationMap> fit_map(std::string_view kind, const FitData& data,
                                        const MapOptions& options = {});

// Rebuild a map from its kind, scale and parameters, validating every field
// (types, finiteness, ranges, monotone knots). `where` names the document for
// error messages. Throws plumb::Error(artifact).
std::unique_ptr<CalibrationMap> load_map(std::string_view kind, Scale scale,
                                         const nlohmann::json& parameters,
                                         const std::string& where);

// Weighted mean log loss of `map` on `data` (probabilities clipped as in
// clipped_logit); used by every kind to fill FitDiagnostics::log_loss.
double mean_log_loss(const CalibrationMap& map, const FitData& data);

}  // namespace plumb
