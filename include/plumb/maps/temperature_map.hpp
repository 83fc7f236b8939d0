#pragma once
// Temperature scaling (Guo, Pleiss, Sun and Weinberger 2017, binary case):
// p = sigmoid(z / T) with one parameter T > 0.
#include <memory>
#include <nlohmann/json.hpp>
#include <string>

#include "plumb/calibration_map.hpp"

namespace plumb {

class TemperatureMap final : public CalibrationMap {
 public:
  // z is clipped_logit(score) on the probability scale and the score itself
  // on the logit scale. Precondition: temperature > 0 and finite.
  TemperatureMap(Scale scale, double temperature) noexcept;

  // Margins have no log-odds reading, so a temperature cannot rescale them.
  static bool accepts(Scale scale) noexcept { return scale != Scale::margin; }

  // Minimises the weighted log loss over T by a safeguarded Newton iteration
  // on 1/T (the loss is convex in 1/T). Throws plumb::Error(fit) when the
  // optimal 1/T is not positive (the score is not positively associated with
  // the label) or either class has no positive weight. When the log-odds
  // separate the labels there is no finite optimum: the fit stops after a
  // bounded number of steps with converged == false and a note.
  static std::unique_ptr<CalibrationMap> fit(const FitData& data, const MapOptions& options);
  // Inverts parameters(): {"temperature": T}. Throws plumb::Error(artifact)
  // when T is missing, not a finite number, or not > 0.
  static std::unique_ptr<CalibrationMap> from_parameters(Scale scale, const nlohmann::json& parameters,
                                                         const std::string& where);

  std::string_view kind() const noexcept override { return "temperature"; }
  Scale scale() const noexcept override { return scale_; }
  Mapped map(double score) const noexcept override;
  nlohmann::json parameters() const override;
  bool monotone() const noexcept override { return true; }

  double temperature() const noexcept { return temperature_; }

 private:
  Scale scale_;
  double temperature_;
};

}  // namespace plumb
