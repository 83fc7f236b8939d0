#include "plumb/maps/fold_average_map.hpp"

#include "core/json_fields.hpp"
#include "plumb/error.hpp"

namespace plumb {

FoldAverageMap::FoldAverageMap(Scale scale, std::vector<std::unique_ptr<CalibrationMap>> maps)
    : scale_(scale), maps_(std::move(maps)) {}

std::unique_ptr<CalibrationMap> FoldAverageMap::fit(const FitData&, const MapOptions&) {
  throw Error(ErrorKind::usage, "a fold_average map is made by plumb cross-fit --final folds, not fitted", {}, {},
              "one of the kinds plumb fit lists");
}

Mapped FoldAverageMap::map(double score) const noexcept {
  Mapped out{0.0, false, false};
  for (const auto& m : maps_) {
    const Mapped r = m->map(score);
    out.probability += r.probability;
    out.outside_fit_range = out.outside_fit_range || r.outside_fit_range;
    out.clipped = out.clipped || r.clipped;
  }
  out.probability /= static_cast<double>(maps_.size());
  return out;
}

nlohmann::json FoldAverageMap::parameters() const {
  nlohmann::json maps = nlohmann::json::array();
  for (const auto& m : maps_) maps.push_back({{"kind", std::string(m->kind())}, {"parameters", m->parameters()}});
  return {{"maps", maps}};
}

bool FoldAverageMap::monotone() const noexcept {
  for (const auto& m : maps_)
    if (!m->monotone()) return false;
  return true;
}

bool FoldAverageMap::decreases_overall() const noexcept {
  for (const auto& m : maps_)
    if (!m->decreases_overall()) return false;
  return !maps_.empty();
}

std::unique_ptr<CalibrationMap> FoldAverageMap::from_parameters(Scale scale, const nlohmann::json& p,
                                                                const std::string& where) {
  namespace jf = json_fields;
  const nlohmann::json& maps = jf::require(p, "maps", where, "parameters.maps");
  if (!maps.is_array() || maps.empty()) jf::fail(where, "parameters.maps", "is not a non-empty array", "the fold maps");
  std::vector<std::unique_ptr<CalibrationMap>> loaded;
  for (std::size_t i = 0; i < maps.size(); ++i) {
    const std::string at = "parameters.maps[" + std::to_string(i) + "]";
    const std::string kind = jf::require_string(maps[i], "kind", where, at + ".kind");
    if (kind == "fold_average") jf::fail(where, at + ".kind", "is a fold average inside a fold average", "a fitted kind");
    loaded.push_back(load_map(kind, scale, jf::require(maps[i], "parameters", where, at + ".parameters"), where));
  }
  return std::make_unique<FoldAverageMap>(scale, std::move(loaded));
}

}  // namespace plumb
