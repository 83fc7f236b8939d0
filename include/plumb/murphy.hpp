#pragma once
// Murphy (1973) decomposition of the Brier score over a binning, with the
// within-bin terms of Stephenson, Coelho and Jolliffe (2008) that make it exact.
#include <span>

#include "plumb/binning.hpp"

namespace plumb {

// With W the total weight, bin k of weight W_k, mean forecast f_k, observed
// frequency o_k, and overall observed rate o:
//   reliability   = sum_k W_k (f_k - o_k)^2 / W
//   resolution    = sum_k W_k (o_k - o)^2 / W
//   uncertainty   = o (1 - o)
//   within_bin_variance   = sum_k sum_{i in k} w_i (p_i - f_k)^2 / W
//   within_bin_covariance = sum_k sum_{i in k} w_i (p_i - f_k)(y_i - o_k) / W
// Guarantee (derived in docs/methods_metrics.md, checked by brute force in the
// tests): for 0/1 labels
//   brier = reliability - resolution + uncertainty
//           + within_bin_variance - 2 * within_bin_covariance
// up to rounding; both within-bin terms vanish when forecasts are constant in
// each bin, leaving Murphy's three-term identity.
struct MurphyDecomposition {
  double brier = 0.0;  // computed directly from the rows, not from the terms
  double reliability = 0.0;
  double resolution = 0.0;
  double uncertainty = 0.0;
  double within_bin_variance = 0.0;
  double within_bin_covariance = 0.0;
};

// `binning` must have been made for the same rows (bin_of_row.size() == n).
MurphyDecomposition murphy_decomposition(std::span<const double> forecast,
                                         std::span<const double> label,
                                         std::span<const double> weight,
                                         const Binning& binning);

// The same with the bins' sums (bin_sums over the same rows and binning) and
// the Brier score (brier_score over the same rows) already at hand.
MurphyDecomposition murphy_decomposition(std::span<const double> forecast,
                                         std::span<const double> label,
                                         std::span<const double> weight,
                                         const Binning& binning, std::span<const BinSums> sums,
                                         double brier);

// The decomposition from a binning's sums, the Brier score and the rows'
// within-bin sums sum w (p - mean forecast of the bin)^2 and
// sum w (p - mean forecast)(y - observed of the bin), not yet divided by
// the total weight (bins of no weight left out).
MurphyDecomposition murphy_from_sums(std::span<const BinSums> sums, double brier, double within_variance,
                                     double within_covariance);

}  // namespace plumb
