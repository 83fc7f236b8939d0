#include "plumb/calibration_regression.hpp"

#include <cmath>
#include <vector>

#include "plumb/error.hpp"

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

// The rows of a regression: logit, label and weight (empty: all 1), or one
// logit per distinct forecast standing for a row of label 1 and weight
// positive[c], then one of label 0 and weight negative[c].
struct RowColumns {
  std::span<const double> logit, label, weight;
  std::size_t size() const noexcept { return logit.size(); }
  double x(std::size_t i) const noexcept { return logit[i]; }
  double y(std::size_t i) const noexcept { return label[i]; }
  double w(std::size_t i) const noexcept { return detail::weight_at(weight, i); }
};
struct PairedColumns {
  std::span<const double> logit, positive, negative;
  std::size_t size() const noexcept { return 2 * logit.size(); }
  double x(std::size_t i) const noexcept { return logit[i >> 1]; }
  double y(std::size_t i) const noexcept { return (i & 1) ? 0.0 : 1.0; }
  double w(std::size_t i) const noexcept { return (i & 1) ? negative[i >> 1] : positive[i >> 1]; }
};

// Solves sum w (y - sigmoid(a + l)) = 0 for a. The left side falls strictly
// in a, so a bracket plus Newton steps kept inside it (bisecting when a step
// leaves) always converges when a root exists (both classes present). A
// row of zero weight adds a zero to each sum, which leaves it as it was
// (the sums start at +0 and never become -0), so the paired rows give the
// sums of the rows of positive weight alone, bit for bit.
template <class Rows>
OffsetFit fit_offset_intercept(const Rows& rows, double total) {
  auto score = [&](double a, double* slope) {
    double g = 0.0, h = 0.0;
    for (std::size_t i = 0; i < rows.size(); ++i) {
      const double w = rows.w(i);
      const double q = sigmoid(a + rows.x(i));
      g += w * (rows.y(i) - q);
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

// The two fits of the calibration regression; `out` carries the clipped
// count already, `total` is the rows' weight.
CalibrationRegression finish_regression(CalibrationRegression out, const LogisticFit& fit, const OffsetFit& offset) {
  out.slope = fit.coef.at(0);
  out.intercept_free = fit.coef.at(1);
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
  detail::require_positive_total("calibration_regression", total);
  const LogisticFit fit = fit_logistic(logit, 1, label, weight, true);
  return finish_regression(out, fit, fit_offset_intercept(RowColumns{logit, label, weight}, total));
}

CalibrationRegression calibration_regression_of_sums(std::span<const double> forecast,
                                                    std::span<const double> weight,
                                                    std::span<const double> positives,
                                                    std::span<const double> negatives,
                                                    std::span<const std::uint64_t> rows) {
  const std::size_t n = forecast.size();
  if (weight.size() != n || positives.size() != n || negatives.size() != n || (!rows.empty() && rows.size() != n))
    throw Error(ErrorKind::internal, "calibration_regression_of_sums: columns differ in length");
  CalibrationRegression out;
  std::vector<double> logit(n);
  double total = 0.0;
  for (std::size_t c = 0; c < n; ++c) {
    bool clipped = false;
    logit[c] = clipped_logit(forecast[c], &clipped);
    if (clipped) out.clipped += rows.empty() ? static_cast<std::uint64_t>(weight[c]) : rows[c];
    total += weight[c];
  }
  detail::require_positive_total("calibration_regression", total);
  const LogisticFit fit = fit_logistic_paired(logit, positives, negatives);
  return finish_regression(out, fit, fit_offset_intercept(PairedColumns{logit, positives, negatives}, total));
}

CalibrationRegression calibration_regression(const ForecastCells& cells) {
  return calibration_regression_of_sums(cells.forecast, cells.weight, cells.positives, cells.negatives, cells.rows);
}

}  // namespace plumb
