#include "plumb/murphy.hpp"

#include <vector>

#include "core/metric_input.hpp"
#include "plumb/scores.hpp"

namespace plumb {

MurphyDecomposition murphy_decomposition(std::span<const double> forecast,
                                         std::span<const double> label,
                                         std::span<const double> weight,
                                         const Binning& binning) {
  const std::vector<BinSums> sums = bin_sums(forecast, label, weight, binning);
  return murphy_decomposition(forecast, label, weight, binning, sums, brier_score(forecast, label, weight));
}

MurphyDecomposition murphy_decomposition(std::span<const double> forecast,
                                         std::span<const double> label,
                                         std::span<const double> weight,
                                         const Binning& binning, std::span<const BinSums> sums,
                                         double brier) {
  if (sums.size() != binning.bin_count || binning.bin_of_row.size() != forecast.size())
    throw Error(ErrorKind::internal, "murphy_decomposition: the bins were made for other rows");
  // A second pass around the bin means: the one-pass form sum w p^2 - W f^2
  // would cancel badly when forecasts barely vary inside a bin.
  double variance = 0.0, covariance = 0.0;
  for (std::size_t i = 0; i < forecast.size(); ++i) {
    const BinSums& s = sums[binning.bin_of_row[i]];
    if (!(s.weight > 0.0)) continue;
    const double w = detail::weight_at(weight, i);
    const double dp = forecast[i] - s.mean_forecast();
    variance += w * dp * dp;
    covariance += w * dp * (label[i] - s.observed());
  }
  return murphy_from_sums(sums, brier, variance, covariance);
}

MurphyDecomposition murphy_from_sums(std::span<const BinSums> sums, double brier, double within_variance,
                                     double within_covariance) {
  double total = 0.0, positives = 0.0;
  for (const BinSums& s : sums) {
    total += s.weight;
    positives += s.label;
  }
  detail::require_positive_total("murphy_decomposition", total);
  const double rate = positives / total;

  MurphyDecomposition out;
  out.brier = brier;
  out.uncertainty = rate * (1.0 - rate);
  for (const BinSums& s : sums) {
    if (!(s.weight > 0.0)) continue;
    const double f = s.mean_forecast(), o = s.observed();
    out.reliability += s.weight * (f - o) * (f - o);
    out.resolution += s.weight * (o - rate) * (o - rate);
  }
  out.reliability /= total;
  out.resolution /= total;
  out.within_bin_variance = within_variance / total;
  out.within_bin_covariance = within_covariance / total;
  return out;
}

}  // namespace plumb
