#include "plumb/maps/class_fold_average_map.hpp"

#include <algorithm>

#include "core/json_fields.hpp"
#include "plumb/error.hpp"

namespace plumb {

ClassFoldAverageMap::ClassFoldAverageMap(std::vector<std::string> classes, ClassScale scale,
                                         std::vector<std::shared_ptr<const ClassCalibrationMap>> maps)
    : ClassCalibrationMap(std::move(classes), scale), maps_(std::move(maps)) {}

bool ClassFoldAverageMap::map(const double* in, double* out) const noexcept {
  const std::size_t k = classes_.size();
  // K is small (a classifier's classes); the stack holds common sizes.
  double q_small[16];
  std::vector<double> q_large;
  double* q = q_small;
  if (k > 16) {
    q_large.resize(k);
    q = q_large.data();
  }
  std::fill(out, out + k, 0.0);
  bool clipped = false;
  for (const auto& m : maps_) {
    clipped = m->map(in, q) || clipped;
    for (std::size_t j = 0; j < k; ++j) out[j] += q[j];
  }
  const double n = static_cast<double>(maps_.size());
  for (std::size_t j = 0; j < k; ++j) out[j] /= n;
  return clipped;
}

nlohmann::json ClassFoldAverageMap::parameters() const {
  nlohmann::json maps = nlohmann::json::array();
  for (const auto& m : maps_) maps.push_back({{"kind", std::string(m->kind())}, {"parameters", m->parameters()}});
  return {{"maps", maps}};
}

std::unique_ptr<ClassCalibrationMap> ClassFoldAverageMap::load(std::vector<std::string> classes, ClassScale scale,
                                                               const nlohmann::json& p, const std::string& where) {
  namespace jf = json_fields;
  const nlohmann::json& maps = jf::require(p, "maps", where, "parameters.maps");
  if (!maps.is_array() || maps.empty()) jf::fail(where, "parameters.maps", "is not a non-empty array", "the fold maps");
  std::vector<std::shared_ptr<const ClassCalibrationMap>> loaded;
  for (std::size_t i = 0; i < maps.size(); ++i) {
    const std::string at = "parameters.maps[" + std::to_string(i) + "]";
    if (!maps[i].is_object()) jf::fail(where, at, "is not an object", "a fold map's kind and parameters");
    const std::string kind = jf::require_string(maps[i], "kind", where, at + ".kind");
    if (kind == "fold_average") jf::fail(where, at + ".kind", "is a fold average inside a fold average", "a fitted kind");
    loaded.push_back(load_class_map(kind, classes, scale, jf::require(maps[i], "parameters", where, at + ".parameters"),
                                    where));
  }
  return std::make_unique<ClassFoldAverageMap>(std::move(classes), scale, std::move(loaded));
}

}  // namespace plumb
