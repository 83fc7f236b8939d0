#pragma once
// The maps of a cross-fit's folds kept side by side; a score maps to the
// mean of their probabilities. Written by `plumb cross-fit --final folds`,
// never fitted directly.
#include <memory>
#include <vector>

#include "plumb/calibration_map.hpp"

namespace plumb {

class FoldAverageMap final : public CalibrationMap {
 public:
  // Precondition: at least one map, all on `scale`.
  FoldAverageMap(Scale scale, std::vector<std::unique_ptr<CalibrationMap>> maps);

  static bool accepts(Scale) noexcept { return true; }
  // Always throws plumb::Error(usage): this kind is made by cross-fit.
  static std::unique_ptr<CalibrationMap> fit(const FitData& data, const MapOptions& options);
  // {"maps": [{"kind": K, "parameters": {...}}, ...]}; nested fold averages
  // are refused. Throws plumb::Error(artifact).
  static std::unique_ptr<CalibrationMap> from_parameters(Scale scale, const nlohmann::json& parameters,
                                                         const std::string& where);

  std::string_view kind() const noexcept override { return "fold_average"; }
  Scale scale() const noexcept override { return scale_; }
  // The mean of the fold maps' probabilities; outside_fit_range and clipped
  // when any fold map says so.
  Mapped map(double score) const noexcept override;
  nlohmann::json parameters() const override;
  bool monotone() const noexcept override;
  // When every fold map decreases as a whole.
  bool decreases_overall() const noexcept override;

  const std::vector<std::unique_ptr<CalibrationMap>>& maps() const noexcept { return maps_; }

 private:
  Scale scale_;
  std::vector<std::unique_ptr<CalibrationMap>> maps_;
};

}  // namespace plumb
