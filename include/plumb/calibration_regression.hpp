#pragma once
// Calibration-in-the-large and the logistic recalibration of Cox (1958):
// regress the label on the forecast's log-odds.
#include <cstddef>
#include <cstdint>
#include <span>
#include <vector>

#include "plumb/forecast_cells.hpp"

namespace plumb {

// Weighted mean forecast minus weighted observed rate. Positive: the
// forecasts are too high on average (the same sign convention as the gap in
// reliability.hpp).
double calibration_in_the_large(std::span<const double> forecast, std::span<const double> label,
                                std::span<const double> weight = {});

// Two fits of P(y = 1) on l = clipped_logit(forecast) (scale.hpp), weighted:
//   two-parameter fit (Cox 1958):  logit P = intercept_free + slope * l
//   offset fit (slope held at 1):  logit P = intercept_at_unit_slope + l
// A calibrated forecaster has slope 1 and both intercepts 0. slope < 1 means
// the forecasts are too extreme (over-confident), slope > 1 too timid.
// intercept_at_unit_slope is "calibration-in-the-large on the log-odds
// scale": > 0 means the forecasts are too low on average. intercept_free is
// the intercept of the two-parameter fit and reads together with the slope
// (it is the log-odds correction at l = 0, i.e. at forecast 1/2).
// The two-parameter fit uses plumb::fit_logistic (logistic.hpp); the
// one-parameter offset fit solves its score equation by safeguarded Newton
// steps (it is monotone in the intercept). converged is false when either fit
// did not converge (e.g. separated data); the coefficients are then finite
// but not meaningful.
struct CalibrationRegression {
  double slope = 0.0;
  double intercept_free = 0.0;
  double intercept_at_unit_slope = 0.0;
  bool converged = false;
  std::size_t clipped = 0;  // forecasts moved to the clip bound before the log-odds
};

CalibrationRegression calibration_regression(std::span<const double> forecast,
                                             std::span<const double> label,
                                             std::span<const double> weight = {});

// The same fit from the rows' cells (forecast_cells.hpp): each distinct
// forecast enters as at most two weighted observations, its positive weight
// with label 1 and its negative weight with label 0, so the Newton steps
// cost O(cells) instead of O(rows). The maximiser is the same; the sums are
// taken in another order, so the last bits can differ from the row form.
CalibrationRegression calibration_regression(const ForecastCells& cells);

// The same fit from per-forecast sums without a ForecastCells (report
// --tally reads its tally's sums): forecast c, ascending, with weight[c]
// (the rows' weight), positives[c] (sum w y) and negatives[c]
// (sum w (1 - y)), and rows[c] rows (empty: rows[c] is weight[c], every row
// weighing 1). calibration_regression(cells) is this on the cells' columns,
// so the two agree bit for bit. The Newton steps read the sums in place
// (fit_logistic_paired): the only copy is one log-odds per forecast.
CalibrationRegression calibration_regression_of_sums(std::span<const double> forecast,
                                                    std::span<const double> weight,
                                                    std::span<const double> positives,
                                                    std::span<const double> negatives,
                                                    std::span<const std::uint64_t> rows = {});

}  // namespace plumb
