#pragma once
// The multi-class maps of a cross-fit's folds kept side by side: a row maps
// to the mean of their K-probability vectors, which sums to 1 as each of
// them does (a mean of points of the simplex stays on it). Written by
// `plumb cross-fit --scores ... --final folds`, never fitted directly, and
// kept out of the multi-class registry (class_map_kinds()) for that reason:
// load_class_map() reads it by its kind name, "fold_average".
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "plumb/class_map.hpp"

namespace plumb {

class ClassFoldAverageMap final : public ClassCalibrationMap {
 public:
  // Precondition: at least one map, each with `classes` in this order and on
  // `scale`, none of them a ClassFoldAverageMap.
  ClassFoldAverageMap(std::vector<std::string> classes, ClassScale scale,
                      std::vector<std::shared_ptr<const ClassCalibrationMap>> maps);

  // {"maps": [{"kind": KIND, "parameters": {...}}, ...]}, the fold maps in
  // fold order. Throws plumb::Error(artifact) naming `where` and the field:
  // not a non-empty array, a fold map without kind or parameters, a fold
  // average inside a fold average, and what load_class_map throws.
  static std::unique_ptr<ClassCalibrationMap> load(std::vector<std::string> classes, ClassScale scale,
                                                   const nlohmann::json& parameters, const std::string& where);

  std::string_view kind() const noexcept override { return "fold_average"; }
  // The mean over the fold maps of their probabilities, class by class;
  // true when any fold map raised a probability to the floor.
  bool map(const double* in, double* out) const noexcept override;
  nlohmann::json parameters() const override;

  const std::vector<std::shared_ptr<const ClassCalibrationMap>>& maps() const noexcept { return maps_; }

 private:
  std::vector<std::shared_ptr<const ClassCalibrationMap>> maps_;
};

}  // namespace plumb
