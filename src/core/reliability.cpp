#include "plumb/reliability.hpp"

#include <boost/math/distributions/normal.hpp>
#include <cmath>
#include <limits>

#include "plumb/error.hpp"

namespace plumb {

Interval wilson_interval(double observed, double n, double confidence) {
  constexpr double nan = std::numeric_limits<double>::quiet_NaN();
  if (!(confidence > 0.0 && confidence < 1.0))
    throw Error(ErrorKind::usage, "the confidence level must lie strictly between 0 and 1",
                {}, std::to_string(confidence), "a value such as 0.95");
  if (!(n > 0.0)) return {nan, nan};
  const boost::math::normal_distribution<double> normal;
  const double z = boost::math::quantile(normal, 0.5 + 0.5 * confidence);
  const double z2n = z * z / n;
  const double centre = (observed + 0.5 * z2n) / (1.0 + z2n);
  const double half =
      z / (1.0 + z2n) * std::sqrt(observed * (1.0 - observed) / n + z * z / (4.0 * n * n));
  return {std::max(0.0, centre - half), std::min(1.0, centre + half)};
}

ReliabilityTable reliability_table(std::span<const double> forecast,
                                   std::span<const double> label,
                                   std::span<const double> weight, BinningKind kind,
                                   std::size_t bins, double confidence) {
  const Binning binning = make_binning(forecast, weight, kind, bins);
  const std::vector<BinSums> sums = bin_sums(forecast, label, weight, binning);
  return reliability_table(binning, sums, confidence);
}

ReliabilityTable reliability_table(const Binning& binning, std::span<const BinSums> sums, double confidence) {
  constexpr double nan = std::numeric_limits<double>::quiet_NaN();
  ReliabilityTable table;
  table.binning = binning.kind;
  table.confidence = confidence;
  table.bins.reserve(sums.size());
  for (std::size_t b = 0; b < sums.size(); ++b) {
    const BinSums& s = sums[b];
    ReliabilityBin row;
    row.edge_lo = binning.edge_lo[b];
    row.edge_hi = binning.edge_hi[b];
    row.forecast_min = s.forecast_min;
    row.forecast_max = s.forecast_max;
    row.rows = s.rows;
    row.weight = s.weight;
    if (s.weight > 0.0) {
      row.effective_size = s.effective_size();
      row.mean_forecast = s.mean_forecast();
      row.observed = s.observed();
      const Interval ci = wilson_interval(row.observed, row.effective_size, confidence);
      row.observed_lo = ci.lo;
      row.observed_hi = ci.hi;
      row.gap = row.mean_forecast - row.observed;
    } else {
      row.mean_forecast = row.observed = row.observed_lo = row.observed_hi = row.gap = nan;
      // Validate the level even when no bin needs it, so a bad level never passes silently.
      (void)wilson_interval(0.5, 1.0, confidence);
    }
    table.bins.push_back(row);
  }
  return table;
}

}  // namespace plumb
