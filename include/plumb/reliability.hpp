#pragma once
// The reliability table: one row per bin of the forecasts, with the observed
// frequency, its Wilson (1927) score interval and the gap.
#include <cstddef>
#include <span>
#include <vector>

#include "plumb/binning.hpp"

namespace plumb {

struct ReliabilityBin {
  double edge_lo = 0.0;  // nominal range (binning.hpp)
  double edge_hi = 0.0;
  double forecast_min = 0.0;  // forecasts actually seen (NaN when empty)
  double forecast_max = 0.0;
  std::size_t rows = 0;
  double weight = 0.0;
  double effective_size = 0.0;  // Kish (1965) (sum w)^2 / sum w^2; = rows unweighted
  double mean_forecast = 0.0;   // NaN when the bin has zero weight (also below)
  double observed = 0.0;
  double observed_lo = 0.0;     // Wilson score interval for the observed frequency
  double observed_hi = 0.0;
  double gap = 0.0;             // mean_forecast - observed (> 0: forecasts too high)
};

struct ReliabilityTable {
  BinningKind binning = BinningKind::equal_width;
  double confidence = 0.95;
  std::vector<ReliabilityBin> bins;  // every bin, empty ones included
};

// Wilson (1927) score interval for a proportion `observed` from `n` trials at
// two-sided `confidence` (z = the normal quantile from Boost.Math):
//   (o + z^2/(2n) +- z sqrt(o(1-o)/n + z^2/(4n^2))) / (1 + z^2/n).
// With weights, n is the Kish effective size, which keeps the interval's
// width honest for unequal weights (an approximation; exact for equal ones).
// Returns {NaN, NaN} for n <= 0. Requires 0 < confidence < 1.
struct Interval {
  double lo;
  double hi;
};
Interval wilson_interval(double observed, double n, double confidence);

// Bins the rows (binning.hpp) and tabulates; `confidence` in (0, 1).
ReliabilityTable reliability_table(std::span<const double> forecast,
                                   std::span<const double> label,
                                   std::span<const double> weight, BinningKind kind,
                                   std::size_t bins, double confidence = 0.95);

// The same from a binning and its sums (bin_sums over the same rows).
ReliabilityTable reliability_table(const Binning& binning, std::span<const BinSums> sums,
                                   double confidence = 0.95);

}  // namespace plumb
