#pragma once
// Beta calibration (Kull, Silva Filho and Flach 2017):
// logit p = a ln s - b ln(1 - s) + c, for probability scores s.
#include <memory>
#include <nlohmann/json.hpp>
#include <string>

#include "plumb/calibration_map.hpp"

namespace plumb {

class BetaMap final : public CalibrationMap {
 public:
  // `form` is "full", "midpoint" or "shared" (see MapOptions::beta_form).
  // Precondition: a >= 0, b >= 0, all finite.
  BetaMap(double a, double b, double c, std::string form) noexcept;

  static bool accepts(Scale scale) noexcept { return scale == Scale::probability; }

  // Weighted maximum likelihood on ln(s) and -ln(1-s), s clipped into
  // [probability_clip, 1 - probability_clip] (clipped rows are counted).
  // Forms: "full" fits a, b, c; "midpoint" fixes the point where p = 1/2 at
  // s = 1/2 (c = (a - b) ln 2); "shared" sets a = b (a logistic map on the
  // log-odds of s). A negative a or b is set to 0 and the rest refitted, as
  // Kull et al. (2017) prescribe, so the map is always non-decreasing; the
  // diagnostics notes say when this happened.
  // Throws plumb::Error(usage) for an unknown form, plumb::Error(fit) when
  // either class has no positive weight.
  static std::unique_ptr<CalibrationMap> fit(const FitData& data, const MapOptions& options);
  // Inverts parameters(): {"a", "b", "c", "form"}. Throws plumb::Error(artifact)
  // on a missing or non-finite field, a negative a or b, an unknown form, or
  // coefficients that break the form's restriction.
  static std::unique_ptr<CalibrationMap> from_parameters(Scale scale, const nlohmann::json& parameters,
                                                         const std::string& where);

  std::string_view kind() const noexcept override { return "beta"; }
  Scale scale() const noexcept override { return Scale::probability; }
  Mapped map(double score) const noexcept override;
  nlohmann::json parameters() const override;
  bool monotone() const noexcept override { return a_ >= 0.0 && b_ >= 0.0; }

  double a() const noexcept { return a_; }
  double b() const noexcept { return b_; }
  double c() const noexcept { return c_; }
  const std::string& form() const noexcept { return form_; }

 private:
  double a_;
  double b_;
  double c_;
  std::string form_;
};

}  // namespace plumb
