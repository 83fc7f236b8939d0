#pragma once
// Centered isotonic map (Oron and Flournoy 2017, "Centered isotonic
// regression: point and interval estimation for dose-response studies"):
// the pool-adjacent-violators fit, each pooled block drawn as one point at
// its weighted mean score and its pooled value, the points joined by
// straight lines. Where plain isotonic holds one value across a block, so
// that every score of the block ties, this map keeps rising; it ties scores
// only below the first point and above the last, where it holds the end
// values as isotonic holds its ends. With `strict`, a minimal slope is added
// everywhere so that distinct scores get distinct probabilities.
#include <cstdint>
#include <memory>
#include <vector>

#include "plumb/calibration_map.hpp"

namespace plumb {

// The weight of the minimal slope of the strict form (docs/methods.md): the
// map is (1 - eps) c(s) + eps T(s), with c the centered isotonic line and
// T(s) = (1 + tanh((s - m) / h)) / 2, m and h the middle and half-width of
// the fitted scores' range (h = 1 when they are one score).
inline constexpr double centered_isotonic_tilt = 1e-6;

class CenteredIsotonicMap final : public CalibrationMap {
 public:
  // point_score strictly increasing, point_value strictly increasing in
  // [0, 1], point_weight > 0, all of one length >= 1; [fitted_lo, fitted_hi]
  // the range of the fitted scores, holding every point. tilt: 0 (weak) or
  // the strict form's eps.
  CenteredIsotonicMap(Scale scale, std::vector<double> point_score, std::vector<double> point_value,
                      std::vector<double> point_weight, double fitted_lo, double fitted_hi, double tilt);

  static bool accepts(Scale) noexcept { return true; }
  // The PAV blocks of the rows (adjacent blocks of equal value pooled into
  // one), each drawn at its weighted mean score. options.centered_strict
  // chooses the strict form.
  static std::unique_ptr<CalibrationMap> fit(const FitData& data, const MapOptions& options);
  static std::unique_ptr<CalibrationMap> from_parameters(Scale scale, const nlohmann::json& parameters,
                                                         const std::string& where);

  std::string_view kind() const noexcept override { return "centered_isotonic"; }
  Scale scale() const noexcept override { return scale_; }
  // Between two points: the straight line joining them. Below the first
  // point: its value; above the last: its value (the weak form ties there).
  // The strict form adds the minimal slope above. Flagged outside_fit_range
  // outside [fitted_lo, fitted_hi].
  Mapped map(double score) const noexcept override;
  nlohmann::json parameters() const override;
  bool monotone() const noexcept override { return true; }
  // The weak form with an end value of 0 or 1. The strict form stays
  // strictly inside (0, 1) except beyond about 19 half-widths outside the
  // fitted range, where tanh rounds to -1 or 1.
  bool reaches_zero_or_one() const noexcept override;

  const std::vector<double>& point_score() const noexcept { return x_; }
  const std::vector<double>& point_value() const noexcept { return y_; }
  bool strict() const noexcept { return tilt_ > 0.0; }
  // The strict form's weight and its tanh's middle and half-width, as map()
  // uses them (the SQL and C exports repeat map()'s operations with them).
  double tilt() const noexcept { return tilt_; }
  double middle() const noexcept { return middle_; }
  double half_width() const noexcept { return half_width_; }

 private:
  Scale scale_;
  std::vector<double> x_, y_, w_;
  double lo_, hi_, tilt_;
  double middle_ = 0.0, half_width_ = 1.0;
  // A guide for the search of line(): see the constructor. Empty for fewer
  // than 16 points or a range that is not a finite positive width.
  std::vector<std::uint32_t> guide_;
  double guide_origin_ = 0.0, guide_scale_ = 0.0;
  double line(double score) const noexcept;
};

}  // namespace plumb
