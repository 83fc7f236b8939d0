#pragma once
// Multi-class calibration maps: fitted on the rows of a K-class classifier
// (plumb::ClassScores), each maps one row's K scores to K probabilities
// summing to 1, and writes and reads itself as JSON.
//
// Every kind works on the row's log-probabilities l = log softmax(z): for
// scores on the logit scale z is the row as read; on the probability scale
// z = log(max(p, class_probability_floor)). Taking log softmax first makes a
// map blind to the constant any logit row may carry.
//
//   temperature  (Guo et al. 2017)      q = softmax(l / T), T > 0
//   vector       (Guo et al. 2017)      q = softmax(a .* l + b)
//   dirichlet    (Kull et al. 2019)     q = softmax(W l + b), with the penalty
//                                       l2 * (sum of W's off-diagonal squares + sum of b's squares)
//                                       added to the weighted mean log loss; l2 = 0 is matrix
//                                       scaling on log-probabilities
//   one_vs_rest  (Zadrozny and Elkan 2002)  class k's binary map on the row's p_k (no floor),
//                                       then each row divided by its sum
//
// The kinds live in their own registry (class_map_kinds()), apart from the
// binary kinds' (plumb/map_registry.hpp): they fit rows of K values, not
// per-score sums of one score, and map rows, not scores, so none of the
// binary registry's facts (scales, tallies) applies; the SQL and C export of
// these kinds is io::class_sql_export and io::class_c_export.
#include <cstddef>
#include <memory>
#include <optional>
#include <nlohmann/json.hpp>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/calibration_map.hpp"
#include "plumb/class_scores.hpp"

namespace plumb {

// Probabilities below this are raised to it before their logarithm (a row's
// exact 0 would otherwise give an infinite log-probability). Counted in the
// fit's clipped rows.
inline constexpr double class_probability_floor = 1e-15;

// The options of every multi-class kind; a kind reads only its own.
struct ClassMapOptions {
  // dirichlet: the L2 weight on W's off-diagonal and on b (>= 0).
  double l2 = 0.0;
  // one_vs_rest: the binary kind fitted per class, and its options.
  std::string per_class = "isotonic";
  MapOptions binary{};
};

class ClassCalibrationMap {
 public:
  virtual ~ClassCalibrationMap() = default;
  // "temperature", "vector", "dirichlet" or "one_vs_rest".
  virtual std::string_view kind() const noexcept = 0;
  const std::vector<std::string>& classes() const noexcept { return classes_; }
  std::size_t k() const noexcept { return classes_.size(); }
  ClassScale scale() const noexcept { return scale_; }
  // Maps one row: `in` holds k() scores on scale() (finite; probabilities in
  // [0, 1]), `out` receives k() probabilities in [0, 1] summing to 1 (up to
  // rounding). Returns true when a probability was raised to
  // class_probability_floor.
  virtual bool map(const double* in, double* out) const noexcept = 0;
  // The kind's parameters as a JSON object; load_class_map() inverts it exactly.
  virtual nlohmann::json parameters() const = 0;
  const FitDiagnostics& diagnostics() const noexcept { return diagnostics_; }
  void restore_diagnostics(FitDiagnostics d) { diagnostics_ = std::move(d); }

 protected:
  ClassCalibrationMap(std::vector<std::string> classes, ClassScale scale)
      : classes_(std::move(classes)), scale_(scale) {}
  std::vector<std::string> classes_;
  ClassScale scale_;
  FitDiagnostics diagnostics_;
};

// One entry per multi-class kind: its name, fit's help line, its rank for
// cross-fit's one-standard-error rule (lower is simpler) and its functions.
struct ClassMapKind {
  std::string_view name;
  std::string_view help;
  int complexity;
  std::unique_ptr<ClassCalibrationMap> (*fit)(const ClassScores&, const ClassMapOptions&);
  std::unique_ptr<ClassCalibrationMap> (*load)(std::vector<std::string> classes, ClassScale scale,
                                               const nlohmann::json& parameters, const std::string& where);
};
std::span<const ClassMapKind> class_map_kinds() noexcept;
const ClassMapKind* find_class_map_kind(std::string_view name) noexcept;
// "temperature, vector, dirichlet, one_vs_rest".
std::string class_map_kind_list();

// The row's log-probabilities: log softmax of a logit row, or the logarithm
// of each probability (raised to class_probability_floor) less the log of
// their sum. Returns true when a probability was raised.
bool log_probabilities(const double* in, std::size_t k, ClassScale scale, double* out) noexcept;
// softmax of `eta` (k values) into `out`, computed with the largest value
// taken out first.
void softmax(const double* eta, std::size_t k, double* out) noexcept;

// The most classes a dirichlet map is fitted for (its Newton step solves
// K(K+1) equations, and each row adds about (K(K+1))^2 / 2 terms).
inline constexpr std::size_t max_dirichlet_classes = 20;

// Fit a map of `kind`. Throws plumb::Error: usage for an unknown kind or an
// option out of range (a negative l2, an unknown per-class kind); fit when
// the rows cannot support the fit: no row of positive weight, a class with
// no row of positive weight (named), or dirichlet for more than
// max_dirichlet_classes classes. Precondition: data holds labels,
// and values valid on its scale (as io::read_class_scores guarantees).
std::unique_ptr<ClassCalibrationMap> fit_class_map(std::string_view kind, const ClassScores& data,
                                                   const ClassMapOptions& options = {});

// Rebuild a map from the artifact's fields, validating each: a kind of the
// registry, or "fold_average" (cross-fit --final folds: the mean of its fold
// maps, plumb/maps/class_fold_average_map.hpp). Throws
// plumb::Error(artifact) naming `where` and the field.
std::unique_ptr<ClassCalibrationMap> load_class_map(std::string_view kind, std::vector<std::string> classes,
                                                    ClassScale scale, const nlohmann::json& parameters,
                                                    const std::string& where);

// Weighted mean log loss of `map` on labelled `data` (probabilities floored
// at class_probability_floor).
double class_log_loss(const ClassCalibrationMap& map, const ClassScores& data);

// "probability" or "logit", and back (nullopt for another text).
std::string_view to_string(ClassScale scale) noexcept;
std::optional<ClassScale> parse_class_scale(std::string_view text) noexcept;

}  // namespace plumb
