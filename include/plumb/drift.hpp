#pragma once
// Drift of a map's input since its fit: tonight's scores (and labels, when
// they have arrived) against the fit rows' reference (or another set of
// rows), both counted on one grid of the score (docs/methods_metrics.md,
// "Drift"). Pure computation; plumb drift (src/cli/drift.cpp) reads and
// prints.
#include <cstdint>
#include <limits>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "plumb/bootstrap.hpp"
#include "plumb/calibration_map.hpp"
#include "plumb/report.hpp"
#include "plumb/scale.hpp"

namespace plumb {

// The grid of the reference when fit is not told otherwise: a step of 0.02
// in log-odds, which moves no probability by more than 0.0025 (half a step
// times 1/4, the largest slope of the logistic curve).
inline constexpr double default_reference_grid = 0.02;

// Rows counted per cell of a grid of the score: on the logit and margin
// scales the cell of s is nearbyint(s / step); on the probability scale, for
// steps of at least min_table_step, the cell of p is the least k with
// p <= b_k, where b_k = sigmoid((k + 1/2) step) made non-decreasing in k
// (the cell whose log-odds are nearest, up to the rounding of the
// boundaries), and for finer steps nearbyint(logit(p) / step) (the tally's
// --logit-grid rule, plumb/tally.hpp). Scores of exactly 0 and 1 have cells
// of their own. A cell's
// score is its centre (sigmoid(k step) for probabilities), every figure of
// drift is computed on the cells' scores on both sides, so the two sides
// are rounded alike.
struct GridCells {
  Scale scale = Scale::probability;
  double step = default_reference_grid;
  bool labelled = false;                 // positive counts mean something
  std::vector<std::int64_t> index;       // strictly ascending
  std::vector<std::uint64_t> count, positive;  // rows and positive rows per cell
  // Probability scores of exactly 0 and 1 (probability scale only).
  std::uint64_t zero_count = 0, zero_positive = 0, one_count = 0, one_positive = 0;

  std::uint64_t rows() const noexcept;
  std::uint64_t positives() const noexcept;
};

// The cell index of a score (finite, valid on its scale; on the
// probability scale strictly inside (0, 1)), by the rule above. Indices
// beyond +-2^52 are clamped there (a logit or margin beyond 2^52 steps).
// The probability scale's boundary table is built on construction (a few
// milliseconds: about 800 / step boundaries and 2^17 buckets of the
// scores' leading bits, each knowing the cells it spans).
inline constexpr double min_table_step = 1e-3;
class GridIndexer {
 public:
  GridIndexer(Scale scale, double step);
  std::int64_t operator()(double score) const noexcept;

 private:
  std::int64_t by_table(double p) const noexcept;
  Scale scale_;
  double step_;
  std::int64_t first_ = 0;             // the cell of boundary_[0]
  std::vector<double> boundary_;       // b_k for k = first_, first_ + 1, ...
  std::vector<std::uint32_t> lo_, hi_;  // per bucket, the positions in boundary_ its cells span
};
std::int64_t grid_index(double score, Scale scale, double step);
// The centre score of cell k.
double grid_score(std::int64_t k, Scale scale, double step) noexcept;

// Counts rows into cells. Cells live in one flat array that grows to cover
// the indices seen; add() throws Error(input) (with no location: the caller
// adds it) when the scores span more than max_grid_cells cells.
inline constexpr std::size_t max_grid_cells = std::size_t{1} << 22;
class GridCounter {
 public:
  GridCounter(Scale scale, double step, bool labelled);
  // One row; `positive` is ignored unless labelled. Precondition: the score
  // is valid on the scale (finite; in [0, 1] for probabilities).
  void add(double score, bool positive);
  // Many cells at once (a tally's or a reference's counts).
  void add_cell(double score, std::uint64_t count, std::uint64_t positive);
  GridCells finish() const;

 private:
  void grow(std::int64_t k);
  GridIndexer index_;
  Scale scale_;
  double step_;
  bool labelled_;
  std::int64_t first_ = 0;  // index of counts_[0]
  std::vector<std::uint64_t> counts_, positives_;
  std::uint64_t zero_count_ = 0, zero_positive_ = 0, one_count_ = 0, one_positive_ = 0;
};

// Population stability index of shares a (tonight) against r (reference):
// sum_b (a_b - r_b) ln(a_b / r_b). A share of 0 on either side is counted
// as half a row of that side (0.5 / rows), so an empty bin gives a large,
// finite term. Precondition: equal lengths, both sides' rows > 0.
double population_stability_index(std::span<const std::uint64_t> tonight, std::span<const std::uint64_t> reference);

// The Kolmogorov distribution's upper tail P(K > x) (Marsaglia, Tsang and
// Wang 2003's limiting form, as R's C_pKS2 sums it: the theta-function
// series for x < 1, the alternating series otherwise); 1 for x <= 0.
double kolmogorov_upper_tail(double x) noexcept;

struct KsResult {
  double statistic = 0.0;  // sup |F_tonight - F_reference| over the cells
  double p_value = 1.0;    // asymptotic: kolmogorov_upper_tail(sqrt(n m / (n + m)) D)
};
// Two-sample Kolmogorov-Smirnov of the cells' scores (ties are the cells).
KsResult ks_two_sample(const GridCells& tonight, const GridCells& reference);

struct DriftOptions {
  std::size_t bins = 10;         // PSI bins at most
  std::size_t ece_bins = 10;     // equal-width, as plumb report's default
  std::size_t bootstrap = 200;   // replicates of the labelled differences; 0: none
  std::uint64_t seed = 1;
  double confidence = 0.95;
};

// One bin of the PSI: the reference cells' scores it spans, and each side's rows.
struct DriftBin {
  double score_lo = 0.0, score_hi = 0.0;  // centre scores of its first and last reference cell
  std::uint64_t reference = 0, tonight = 0;
  double term = 0.0;  // this bin's PSI term
};

// A labelled figure on both sides and tonight's minus the reference's.
struct DriftFigure {
  double reference = 0.0, tonight = 0.0, difference = 0.0;
  std::optional<BootstrapInterval> interval;  // of the difference; absent without bootstrap
};

enum class RefitVerdict { not_judged, warranted, not_warranted };

struct DriftResult {
  std::uint64_t reference_rows = 0, tonight_rows = 0;
  // Tonight's rows whose raw score lies outside the fitted score range (the
  // caller counts them; compute_drift leaves 0).
  std::uint64_t outside_rows = 0;
  std::vector<DriftBin> bins;
  double psi = 0.0;
  KsResult ks;
  double mean_forecast_reference = 0.0, mean_forecast_tonight = 0.0;  // mean of map(cell score)
  bool labelled = false;  // both sides labelled: the figures below are set
  DriftFigure base_rate, log_loss, brier, ece, mcb;
  RefitVerdict refit = RefitVerdict::not_judged;
  // The refit rule's test: tonight's MCB against its distribution when the
  // map is calibrated on tonight's rows (every cell's positives redrawn as
  // Binomial(count, forecast)): the `confidence` quantile of that
  // distribution, and the p-value (1 + replicates at or above tonight's
  // MCB) / (1 + replicates). NaN when not judged.
  double mcb_if_calibrated = std::numeric_limits<double>::quiet_NaN();
  double refit_p_value = std::numeric_limits<double>::quiet_NaN();
};

// The PSI bins: the reference cells in score order, cut into runs of one
// forecast (the map's own pieces: an isotonic map's blocks, a histogram
// map's bins; every cell of a strictly increasing map), and consecutive
// pieces joined greedily into at most `bins` bins of about equal reference
// rows (a bin closes once the rows so far reach b / bins of the total). A
// tonight cell goes to the first bin whose last reference cell is not below
// it (the last bin past the end). The map gives each cell's forecast.
//
// Labelled figures (both sides labelled) use the core's definitions on the
// cells' forecasts: base rate, log_loss and brier_score (scores.hpp), ECE
// of `ece_bins` equal-width bins (calibration_error.hpp), MCB of the Brier
// score (corp.hpp). Each difference (tonight - reference) gets a percentile
// interval (type 7) over replicates that resample the two sides
// independently: every cell's negative and positive rows weighted by a
// Poisson(count) draw (std::poisson_distribution from std::mt19937_64 seeded
// with seed + replicate), the same draws for every figure; a replicate in
// which a side has no rows is left out. The verdict: warranted when
// tonight's MCB is above what a calibrated map gives on tonight's rows
// (refit_p_value < 1 - confidence, over `bootstrap` replicates of labels
// redrawn by std::binomial_distribution from std::mt19937_64 seeded with
// (seed ^ 0x9E3779B97F4A7C15) + replicate), not_warranted otherwise;
// not_judged without labels or bootstrap. (The MCB's change against the
// fit rows is no rule: a map's MCB on its own fit rows is near 0 and on
// fewer fresh rows larger by chance alone.)
// Throws Error(input) when either side has no rows.
DriftResult compute_drift(const GridCells& reference, const GridCells& tonight, const CalibrationMap& map,
                          const DriftOptions& options);

// The gate metrics of plumb drift (--max / --min), in the order help lists
// them: psi, ks, outside_share, log_loss_change, brier_change, ece_change,
// mcb_change (--max only); base_rate_change and mean_forecast_change
// (signed: both bounds); ks_p (--min only).
std::span<const GateMetric> drift_gate_metrics() noexcept;
const GateMetric* find_drift_gate_metric(std::string_view name) noexcept;
// The value a gate reads (NaN for a labelled figure without labels).
double drift_gate_value(const DriftResult& result, std::string_view metric);
// The gate checked: exceeded beyond the limit or when the value is NaN
// (report's rule, check_gate). GateResult::column is left empty.
GateResult check_drift_gate(const Gate& gate, const DriftResult& result);

// The reference of a map fitted on the rows a tally of unweighted rows
// stands for: each distinct score's rows into its grid cell. Precondition:
// tally.unit_weights (positive[i] is then a count).
struct Tally;
GridCells reference_from_tally(const Tally& tally, double step);

// The percentile interval of type 7 (Hyndman and Fan 1996, R's default) of
// `values` at `confidence`, NaNs left out; {NaN, NaN, 0} when none is left.
BootstrapInterval percentile_interval(std::vector<double> values, double confidence);

}  // namespace plumb
