#include "plumb/calibration_error.hpp"

#include <algorithm>
#include <cmath>

#include "core/metric_input.hpp"

namespace plumb {

CalibrationError calibration_error(std::span<const BinSums> sums, BinningKind kind) {
  CalibrationError out;
  out.binning = kind;
  out.bins = sums.size();
  double total = 0.0;
  for (const BinSums& s : sums) total += s.weight;
  detail::require_positive_total("calibration_error", total);
  double l2 = 0.0, l2_debiased = 0.0;
  for (const BinSums& s : sums) {
    if (!(s.weight > 0.0)) continue;
    ++out.nonempty_bins;
    const double o = s.observed();
    const double gap = std::abs(s.mean_forecast() - o);
    out.ece += s.weight * gap;
    out.mce = std::max(out.mce, gap);
    l2 += s.weight * gap * gap;
    const double m = s.effective_size();
    const double variance = m > 1.0 ? o * (1.0 - o) / (m - 1.0) : 0.0;
    l2_debiased += s.weight * (gap * gap - variance);
  }
  out.ece /= total;
  out.l2_plugin = std::sqrt(l2 / total);
  out.l2_squared_debiased = l2_debiased / total;
  out.l2_debiased = std::sqrt(std::max(0.0, out.l2_squared_debiased));
  return out;
}

CalibrationError calibration_error(std::span<const double> forecast,
                                   std::span<const double> label,
                                   std::span<const double> weight, BinningKind kind,
                                   std::size_t bins) {
  const Binning binning = make_binning(forecast, weight, kind, bins);
  const std::vector<BinSums> sums = bin_sums(forecast, label, weight, binning);
  return calibration_error(sums, kind);
}

}  // namespace plumb
