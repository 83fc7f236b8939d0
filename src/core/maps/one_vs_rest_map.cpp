#include "plumb/maps/one_vs_rest_map.hpp"

#include <cmath>
#include <string>

#include "core/json_fields.hpp"
#include "plumb/error.hpp"
#include "plumb/map_registry.hpp"
#include "plumb/number_text.hpp"

namespace plumb {
namespace jf = json_fields;

namespace {

// A row's class probabilities: on the probability scale the values divided
// by their sum (exactly the values when they sum to 1), on the logit scale
// softmax of the logits. Nothing is floored, so this never raises a value.
void row_probabilities(const double* in, std::size_t k, ClassScale scale, double* p) noexcept {
  if (scale == ClassScale::logit) {
    softmax(in, k, p);
    return;
  }
  double s = 0.0;
  for (std::size_t j = 0; j < k; ++j) s += in[j];
  for (std::size_t j = 0; j < k; ++j) p[j] = in[j] / s;
}

// The mapped values divided by their sum (1/K each when they sum to 0).
// Returns false for that fallback.
bool renormalise(double* q, std::size_t k) noexcept {
  double s = 0.0;
  for (std::size_t j = 0; j < k; ++j) s += q[j];
  if (!(s > 0.0)) {
    for (std::size_t j = 0; j < k; ++j) q[j] = 1.0 / static_cast<double>(k);
    return false;
  }
  for (std::size_t j = 0; j < k; ++j) q[j] /= s;
  return true;
}

}  // namespace

OneVsRestMap::OneVsRestMap(std::vector<std::string> classes, ClassScale scale, std::string per_class,
                           std::vector<std::unique_ptr<CalibrationMap>> maps)
    : ClassCalibrationMap(std::move(classes), scale), per_class_(std::move(per_class)), maps_(std::move(maps)) {}

bool OneVsRestMap::map(const double* in, double* out) const noexcept {
  const std::size_t k = classes_.size();
  // K is small (a classifier's classes); the stack holds common sizes.
  double p_small[16];
  std::vector<double> p_big;
  double* p = p_small;
  if (k > 16) {
    p_big.resize(k);
    p = p_big.data();
  }
  row_probabilities(in, k, scale_, p);
  for (std::size_t j = 0; j < k; ++j) out[j] = maps_[j]->map(p[j]).probability;
  renormalise(out, k);
  return false;
}

nlohmann::json OneVsRestMap::parameters() const {
  nlohmann::json maps = nlohmann::json::array();
  for (const auto& m : maps_) maps.push_back(m->parameters());
  return {{"per_class", per_class_}, {"maps", maps}};
}

std::unique_ptr<ClassCalibrationMap> OneVsRestMap::load(std::vector<std::string> classes, ClassScale scale,
                                                        const nlohmann::json& p, const std::string& where) {
  const std::string kind = jf::require_string(p, "per_class", where, "parameters.per_class");
  const MapKind* entry = find_map_kind(kind);
  if (!entry || !entry->fittable || !entry->accepts(Scale::probability))
    jf::fail(where, "parameters.per_class", "is '" + kind + "'", "a binary kind on probabilities: " + map_kind_list());
  const nlohmann::json& maps = jf::require(p, "maps", where, "parameters.maps");
  if (!maps.is_array() || maps.size() != classes.size())
    jf::fail(where, "parameters.maps", "is not an array of " + std::to_string(classes.size()) + " maps",
             "one binary map's parameters per class");
  std::vector<std::unique_ptr<CalibrationMap>> out;
  for (std::size_t j = 0; j < classes.size(); ++j)
    out.push_back(load_map(kind, Scale::probability, maps[j], where));
  return std::make_unique<OneVsRestMap>(std::move(classes), scale, kind, std::move(out));
}

std::unique_ptr<ClassCalibrationMap> OneVsRestMap::fit(const ClassScores& data, const ClassMapOptions& options) {
  const MapKind* entry = find_map_kind(options.per_class);
  if (!entry || !entry->fittable)
    throw Error(ErrorKind::usage, "unknown binary map kind for --per-class", {}, options.per_class, map_kind_list());
  if (!entry->accepts(Scale::probability))
    throw Error(ErrorKind::usage, "the per-class map must take probabilities", {}, options.per_class,
                "a binary kind on probabilities: " + map_kind_list());
  const std::size_t k = data.k(), n = data.rows;
  std::vector<double> p(n * k);
  for (std::size_t r = 0; r < n; ++r) row_probabilities(data.row(r), k, data.scale, p.data() + r * k);
  std::vector<std::unique_ptr<CalibrationMap>> maps;
  FitDiagnostics diag;
  std::vector<double> score(n), label(n);
  for (std::size_t j = 0; j < k; ++j) {
    for (std::size_t r = 0; r < n; ++r) {
      score[r] = p[r * k + j];
      label[r] = data.label[r] == j ? 1.0 : 0.0;
    }
    FitData fd{score, label, data.weight, Scale::probability};
    maps.push_back(fit_map(options.per_class, fd, options.binary));
    const FitDiagnostics& d = maps.back()->diagnostics();
    diag.iterations += d.iterations;
    diag.converged = diag.converged && d.converged;
    for (const std::string& note : d.notes) diag.notes.push_back("class '" + data.classes[j] + "': " + note);
  }
  auto out = std::make_unique<OneVsRestMap>(data.classes, data.scale, options.per_class, std::move(maps));
  std::size_t all_zero = 0;
  std::vector<double> q(k);
  for (std::size_t r = 0; r < n; ++r) {
    for (std::size_t j = 0; j < k; ++j) q[j] = out->maps_[j]->map(p[r * k + j]).probability;
    if (!renormalise(q.data(), k)) ++all_zero;
  }
  if (all_zero > 0)
    diag.notes.push_back(count_text(all_zero) +
                         " fit rows have every per-class probability 0 and get 1/K for each class");
  out->diagnostics_ = std::move(diag);
  out->diagnostics_.log_loss = class_log_loss(*out, data);
  return out;
}

}  // namespace plumb
