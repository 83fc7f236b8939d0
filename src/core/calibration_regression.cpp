#include "plumb/calibration_regression.hpp"

#include <cmath>
#include <vector>

#include "core/metric_input.hpp"
#include "plumb/logistic.hpp"
#include "plumb/scale.hpp"

namespace plumb {

double calibration_in_the_large(std::span<const double> forecast, std::span<const double> label,
                                std::span<const double> weight) {
  detail::check_metric_input("calibration_in_the_large", forecast, label, weight);
  double total = 0.0, diff = 0.0;
  for (std::size_t i = 0; i < forecast.size(); ++i) {
    const double w = detail::weight_at(weight, i);
    total += w;
    diff += w * (forecast[i] - label[i]);
  }
  detail::require_positive_total("calibration_in_the_large", total);
  return diff / total;
}

namespace {

struct OffsetFit {
  double intercept = 0.0;
  bool converged = false;
};

// Solves sum w (y - sigmoid(a + l)) = 0 for a. The left side falls strictly
// in a, so a bracket plus Newton steps kept inside it (bisecting when a step
// leaves) always converges when a root exists (both classes present).
OffsetFit fit_offset_intercept(std::span<const double> logit, std::span<const double> label,
                               std::span<const double> weight, double total) {
  auto score = [&](double a, double* slope) {
    double g = 0.0, h = 0.0;
    for (std::size_t i = 0; i < logit.size(); ++i) {
      const double w = detail::weight_at(weight, i);
      const double q = sigmoid(a + logit[i]);
      g += w * (label[i] - q);
      h += w * q * (1.0 - q);
    }
    if (slope) *slope = h;
    return g;
  };
  const double tolerance = 1e-12 * total;
  double lo = -1.0, hi = 1.0;
  for (int k = 0; k < 60 && score(lo, nullptr) < 0.0; ++k) lo *= 2.0;
  for (int k = 0; k < 60 && score(hi, nullptr) > 0.0; ++k) hi *= 2.0;
  OffsetFit out;
  if (score(lo, nullptr) < 0.0 || score(hi, nullptr) > 0.0) return out;  // no root: one class
  double a = 0.5 * (lo + hi);
  for (int it = 0; it < 200; ++it) {
    double h = 0.0;
    const double g = score(a, &h);
    if (std::abs(g) <= tolerance) {
      out.converged = true;
      break;
    }
    if (g > 0.0) lo = a; else hi = a;
    double next = h > 0.0 ? a + g / h : 0.5 * (lo + hi);
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (next == a) {
      out.converged = true;
      break;
    }
    a = next;
  }
  out.intercept = a;
  return out;
}

// The two fits of the calibration regression on rows (or weighted cells,
// two rows a distinct forecast) of logit(forecast), label and weight, with
// `total` the weight; `out` carries the clipped count already.
CalibrationRegression fit_regression(CalibrationRegression out, std::span<const double> logit,
                                     std::span<const double> label, std::span<const double> weight, double total) {
  detail::require_positive_total("calibration_regression", total);
  const LogisticFit fit = fit_logistic(logit, 1, label, weight, true);
  out.slope = fit.coef.at(0);
  out.intercept_free = fit.coef.at(1);
  const OffsetFit offset = fit_offset_intercept(logit, label, weight, total);
  out.intercept_at_unit_slope = offset.intercept;
  out.converged = fit.converged && offset.converged;
  return out;
}

}  // namespace

CalibrationRegression calibration_regression(std::span<const double> forecast,
                                             std::span<const double> label,
                                             std::span<const double> weight) {
  detail::check_metric_input("calibration_regression", forecast, label, weight);
  CalibrationRegression out;
  std::vector<double> logit(forecast.size());
  double total = 0.0;
  for (std::size_t i = 0; i < forecast.size(); ++i) {
    bool clipped = false;
    logit[i] = clipped_logit(forecast[i], &clipped);
    if (clipped) ++out.clipped;
    total += detail::weight_at(weight, i);
  }
  return fit_regression(out, logit, label, weight, total);
}

void RegressionObservations::add(double forecast, std::uint64_t rows, double weight_sum, double positives,
                                 double negatives) {
  bool is_clipped = false;
  const double l = clipped_logit(forecast, &is_clipped);
  if (is_clipped) clipped += rows;
  total += weight_sum;
  if (positives > 0.0) {
    logit.push_back(l);
    label.push_back(1.0);
    weight.push_back(positives);
  }
  if (negatives > 0.0) {
    logit.push_back(l);
    label.push_back(0.0);
    weight.push_back(negatives);
  }
}

CalibrationRegression calibration_regression(const RegressionObservations& observations) {
  CalibrationRegression out;
  out.clipped = observations.clipped;
  return fit_regression(out, observations.logit, observations.label, observations.weight, observations.total);
}

CalibrationRegression calibration_regression(const ForecastCells& cells) {
  RegressionObservations observations;
  observations.logit.reserve(2 * cells.size());
  observations.label.reserve(2 * cells.size());
  observations.weight.reserve(2 * cells.size());
  for (std::size_t c = 0; c < cells.size(); ++c)
    observations.add(cells.forecast[c], cells.rows[c], cells.weight[c], cells.positives[c], cells.negatives[c]);
  return calibration_regression(observations);
}

}  // namespace plumb
