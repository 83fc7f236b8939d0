#pragma once
// Platt scaling: p = 1 / (1 + exp(A f + B)) (Platt 1999), fitted by the
// safeguarded Newton method of Lin, Lin and Weng (2007).
#include <memory>
#include <nlohmann/json.hpp>
#include <string>

#include "plumb/calibration_map.hpp"

namespace plumb {

class PlattMap final : public CalibrationMap {
 public:
  // f is clipped_logit(score) on the probability scale (so a = -1, b = 0 is
  // the identity) and the score itself on the logit and margin scales.
  PlattMap(Scale scale, double a, double b, bool smoothed_targets) noexcept;

  static bool accepts(Scale) noexcept { return true; }

  // Maximum-likelihood A, B on data (weighted; rows of zero weight ignored).
  // With options.platt_smoothed_targets, labels are replaced by Platt's
  // targets t+ = (N+ + 1)/(N+ + 2) and t- = 1/(N- + 2), where N+ and N- are
  // the weighted totals of the positive and negative rows.
  // Precondition: scores valid on data.scale, labels 0/1, weights >= 0.
  // Throws plumb::Error(fit) when either class has no positive weight.
  // Separated data gives finite A, B with diagnostics().converged == false.
  static std::unique_ptr<CalibrationMap> fit(const FitData& data, const MapOptions& options);
  // Inverts parameters(): {"a": A, "b": B, "smoothed_targets": bool}.
  // Throws plumb::Error(artifact) on a missing, non-numeric or non-finite field.
  static std::unique_ptr<CalibrationMap> from_parameters(Scale scale, const nlohmann::json& parameters,
                                                         const std::string& where);

  std::string_view kind() const noexcept override { return "platt"; }
  Scale scale() const noexcept override { return scale_; }
  Mapped map(double score) const noexcept override;
  nlohmann::json parameters() const override;
  bool monotone() const noexcept override { return a_ <= 0.0; }

  double a() const noexcept { return a_; }
  double b() const noexcept { return b_; }

 private:
  Scale scale_;
  double a_;
  double b_;
  bool smoothed_targets_;
};

}  // namespace plumb
