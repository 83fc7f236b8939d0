#include "plumb/class_map.hpp"

#include <algorithm>
#include <array>
#include <cmath>

#include "plumb/error.hpp"
#include "plumb/maps/class_fold_average_map.hpp"
#include "plumb/maps/class_scaling_map.hpp"
#include "plumb/maps/one_vs_rest_map.hpp"

namespace plumb {
namespace {

using Form = ClassScalingMap::Form;

template <Form F>
std::unique_ptr<ClassCalibrationMap> fit_scaling(const ClassScores& d, const ClassMapOptions& o) {
  return ClassScalingMap::fit(F, d, o);
}
template <Form F>
std::unique_ptr<ClassCalibrationMap> load_scaling(std::vector<std::string> c, ClassScale s, const nlohmann::json& p,
                                                  const std::string& where) {
  return ClassScalingMap::load(F, std::move(c), s, p, where);
}

// Complexity ranks: one parameter, 2K, K(K+1) and the per-class binary maps
// (nonparametric with the default isotonic, hence last).
constexpr std::array<ClassMapKind, 4> registry{{
    {"temperature", "temperature: one temperature T on the row's log-probabilities (Guo et al. 2017)", 1,
     &fit_scaling<Form::temperature>, &load_scaling<Form::temperature>},
    {"vector", "vector: a scale and a bias per class on the log-probabilities (Guo et al. 2017)", 2,
     &fit_scaling<Form::vector>, &load_scaling<Form::vector>},
    {"dirichlet",
     "dirichlet: a K x K matrix and a bias on the log-probabilities, L2 on the off-diagonal and bias "
     "(--l2; Kull et al. 2019)",
     3, &fit_scaling<Form::dirichlet>, &load_scaling<Form::dirichlet>},
    {"one_vs_rest", "one_vs_rest: a binary map per class (--per-class), then renormalised (Zadrozny and Elkan 2002)",
     4, &OneVsRestMap::fit, &OneVsRestMap::load},
}};

}  // namespace

std::span<const ClassMapKind> class_map_kinds() noexcept { return registry; }

const ClassMapKind* find_class_map_kind(std::string_view name) noexcept {
  for (const ClassMapKind& k : registry)
    if (k.name == name) return &k;
  return nullptr;
}

std::string class_map_kind_list() {
  std::string out;
  for (const ClassMapKind& k : registry) out += (out.empty() ? "" : ", ") + std::string(k.name);
  return out;
}

bool log_probabilities(const double* in, std::size_t k, ClassScale scale, double* out) noexcept {
  bool raised = false;
  if (scale == ClassScale::probability) {
    double sum = 0.0;
    for (std::size_t j = 0; j < k; ++j) {
      double p = in[j];
      if (p < class_probability_floor) {
        p = class_probability_floor;
        raised = true;
      }
      sum += p;
      out[j] = std::log(p);
    }
    const double ls = std::log(sum);
    for (std::size_t j = 0; j < k; ++j) out[j] -= ls;
    return raised;
  }
  double m = in[0];
  for (std::size_t j = 1; j < k; ++j) m = std::max(m, in[j]);
  double s = 0.0;
  for (std::size_t j = 0; j < k; ++j) s += std::exp(in[j] - m);
  const double lse = m + std::log(s);
  for (std::size_t j = 0; j < k; ++j) out[j] = in[j] - lse;
  return false;
}

void softmax(const double* eta, std::size_t k, double* out) noexcept {
  double m = eta[0];
  for (std::size_t j = 1; j < k; ++j) m = std::max(m, eta[j]);
  double s = 0.0;
  for (std::size_t j = 0; j < k; ++j) {
    out[j] = std::exp(eta[j] - m);
    s += out[j];
  }
  for (std::size_t j = 0; j < k; ++j) out[j] /= s;
}

std::unique_ptr<ClassCalibrationMap> fit_class_map(std::string_view kind, const ClassScores& data,
                                                   const ClassMapOptions& options) {
  const ClassMapKind* entry = find_class_map_kind(kind);
  if (!entry)
    throw Error(ErrorKind::usage, "unknown multi-class map kind", {}, std::string(kind), class_map_kind_list());
  if (!(options.l2 >= 0.0 && std::isfinite(options.l2)))
    throw Error(ErrorKind::usage, "the L2 weight is negative or not finite", {}, std::to_string(options.l2),
                "a finite number >= 0");
  const std::size_t k = data.k();
  if (k < 2) throw Error(ErrorKind::fit, "a multi-class map needs two classes or more", {}, {}, "K >= 2");
  if (data.label.size() != data.rows)
    throw Error(ErrorKind::internal, "fit_class_map: the rows are not labelled");
  // Newton's Hessian holds (K(K+1))^2 numbers, and each row adds about half
  // of them: beyond this, the fit would take minutes per step.
  if (kind == "dirichlet" && k > max_dirichlet_classes)
    throw Error(ErrorKind::fit,
                "dirichlet calibration of " + std::to_string(k) + " classes fits " + std::to_string(k * (k + 1)) +
                    " parameters",
                {}, std::to_string(k), "at most " + std::to_string(max_dirichlet_classes) +
                                           " classes for dirichlet (vector or temperature take more)");
  std::vector<double> weight_of(k, 0.0);
  for (std::size_t r = 0; r < data.rows; ++r) weight_of[data.label[r]] += data.weight.empty() ? 1.0 : data.weight[r];
  for (std::size_t j = 0; j < k; ++j)
    if (!(weight_of[j] > 0.0))
      throw Error(ErrorKind::fit, "the class '" + data.classes[j] + "' has no row of positive weight", {},
                  data.classes[j], "rows of every class of the score columns");
  return entry->fit(data, options);
}

std::unique_ptr<ClassCalibrationMap> load_class_map(std::string_view kind, std::vector<std::string> classes,
                                                    ClassScale scale, const nlohmann::json& parameters,
                                                    const std::string& where) {
  const ClassMapKind* entry = find_class_map_kind(kind);
  // The fold average is made by cross-fit, never fitted: it is read here,
  // outside the registry of kinds that fit and cross-fit offer.
  if (!entry && kind != "fold_average") {
    Location loc;
    loc.file = where;
    throw Error(ErrorKind::artifact, "the map artifact holds an unknown multi-class kind", loc, std::string(kind),
                class_map_kind_list() + ", fold_average");
  }
  if (!parameters.is_object()) {
    Location loc;
    loc.file = where;
    throw Error(ErrorKind::artifact, "the map artifact's parameters are not an object", loc, {}, "a JSON object");
  }
  if (!entry) return ClassFoldAverageMap::load(std::move(classes), scale, parameters, where);
  return entry->load(std::move(classes), scale, parameters, where);
}

double class_log_loss(const ClassCalibrationMap& map, const ClassScores& data) {
  const std::size_t k = data.k();
  std::vector<double> q(k);
  double sum = 0.0, wt = 0.0;
  for (std::size_t r = 0; r < data.rows; ++r) {
    const double w = data.weight.empty() ? 1.0 : data.weight[r];
    if (!(w > 0.0)) continue;
    map.map(data.row(r), q.data());
    sum += -w * std::log(std::max(q[data.label[r]], class_probability_floor));
    wt += w;
  }
  return wt > 0.0 ? sum / wt : 0.0;
}

std::string_view to_string(ClassScale scale) noexcept {
  return scale == ClassScale::logit ? "logit" : "probability";
}

std::optional<ClassScale> parse_class_scale(std::string_view text) noexcept {
  if (text == "probability") return ClassScale::probability;
  if (text == "logit") return ClassScale::logit;
  return std::nullopt;
}

}  // namespace plumb
