#pragma once
// Tests of the hypothesis that the forecasts are calibrated: the
// Hosmer-Lemeshow (1980) grouped chi-square and Spiegelhalter's (1986) Z.
#include <cstddef>
#include <span>

#include "plumb/binning.hpp"

namespace plumb {

// Groups are the equal-mass bins of binning.hpp ("deciles of risk" for
// groups = 10): rows sorted by forecast, ties never split, about equal
// weight per group. Over the non-empty groups g with weight N_g, observed
// positives O_g = sum w y and expected positives E_g = sum w p:
//   statistic = sum_g (O_g - E_g)^2 / (E_g (1 - E_g / N_g))
// (equal to the sum over both classes of (observed - expected)^2 / expected).
// df = used_groups - 2; p_value = P(chi-square(df) >= statistic), from
// Boost.Math. A group whose expected count of either class is 0 has no
// variance and is left out (counted in degenerate_groups). With fewer than 3
// used groups df < 1 and p_value is NaN. Weights are frequency weights; for
// other weights the chi-square reference is only approximate.
struct HosmerLemeshow {
  double statistic = 0.0;
  double df = 0.0;
  double p_value = 0.0;
  std::size_t groups_requested = 0;
  std::size_t used_groups = 0;
  std::size_t degenerate_groups = 0;
};

HosmerLemeshow hosmer_lemeshow(std::span<const double> forecast, std::span<const double> label,
                               std::span<const double> weight = {}, std::size_t groups = 10);

// The same from the sums of the rows' equal_mass bins with `groups` bins
// (bin_sums over make_binning(..., equal_mass, groups)).
HosmerLemeshow hosmer_lemeshow(std::span<const BinSums> sums, std::size_t groups);

// Spiegelhalter (1986):
//   z = sum w (y - p)(1 - 2p) / sqrt(sum w (1 - 2p)^2 p (1 - p))
// standard normal under calibration (rows independent, frequency weights);
// p_value = 2 P(N(0,1) >= |z|), from Boost.Math. z > 0 means the squared
// errors are larger than calibrated forecasts would give. When every forecast
// is 0, 1/2 or 1 the variance is 0 and z and p_value are NaN.
struct SpiegelhalterZ {
  double z = 0.0;
  double p_value = 0.0;
};

SpiegelhalterZ spiegelhalter_z(std::span<const double> forecast, std::span<const double> label,
                               std::span<const double> weight = {});

// The statistic from its sums over the rows: numerator sum w (y - p)(1 - 2p)
// and variance sum w (1 - 2p)^2 p (1 - p).
SpiegelhalterZ spiegelhalter_from_sums(double numerator, double variance);

}  // namespace plumb
