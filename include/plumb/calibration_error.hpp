#pragma once
// Binned calibration error: expected and maximum calibration error (Naeini,
// Cooper and Hauskrecht 2015) and a debiased estimate of the squared l2
// calibration error (Kumar, Liang and Ma 2019).
#include <span>
#include <vector>

#include "plumb/binning.hpp"

namespace plumb {

// Over the non-empty bins k of weight W_k (total W), mean forecast f_k and
// observed frequency o_k:
//   ece = sum_k W_k |f_k - o_k| / W       (plug-in, l1)
//   mce = max_k |f_k - o_k|
//   l2_plugin = sqrt(sum_k W_k (f_k - o_k)^2 / W)
//   l2_squared_debiased = sum_k W_k [(f_k - o_k)^2 - o_k (1 - o_k) / (m_k - 1)] / W
// where m_k is the bin's Kish effective size (the row count when unweighted).
// The subtracted term is the unbiased estimate of the variance of o_k for
// labels that are independent Bernoulli with a common mean in the bin, so
// l2_squared_debiased estimates the squared l2 calibration error of the
// binned forecaster without the upward bias of the plug-in (Kumar, Liang and
// Ma 2019, their debiased estimator for the squared l2 error, as given from
// memory). It can be negative when the forecaster is close to calibrated;
// l2_debiased = sqrt(max(0, l2_squared_debiased)) is the figure to set beside
// l2_plugin (not beside ece, which is an l1 quantity). Bins with m_k <= 1 have
// no variance estimate and contribute their plug-in term only.
struct CalibrationError {
  BinningKind binning = BinningKind::equal_width;
  std::size_t bins = 0;           // as requested
  std::size_t nonempty_bins = 0;
  double ece = 0.0;
  double mce = 0.0;
  double l2_plugin = 0.0;
  double l2_squared_debiased = 0.0;
  double l2_debiased = 0.0;
};

// From precomputed bin sums (bin_sums in binning.hpp).
CalibrationError calibration_error(std::span<const BinSums> sums, BinningKind kind);

// Convenience: bins the rows, then as above.
CalibrationError calibration_error(std::span<const double> forecast,
                                   std::span<const double> label,
                                   std::span<const double> weight, BinningKind kind,
                                   std::size_t bins);

}  // namespace plumb
