#include "plumb/goodness_of_fit.hpp"

#include <boost/math/distributions/chi_squared.hpp>
#include <boost/math/distributions/normal.hpp>
#include <cmath>
#include <limits>
#include <vector>

#include "core/metric_input.hpp"
#include "plumb/binning.hpp"

namespace plumb {

HosmerLemeshow hosmer_lemeshow(std::span<const double> forecast, std::span<const double> label,
                               std::span<const double> weight, std::size_t groups) {
  detail::check_metric_input("hosmer_lemeshow", forecast, label, weight);
  const Binning binning = make_binning(forecast, weight, BinningKind::equal_mass, groups);
  const std::vector<BinSums> sums = bin_sums(forecast, label, weight, binning);
  return hosmer_lemeshow(sums, groups);
}

HosmerLemeshow hosmer_lemeshow(std::span<const BinSums> sums, std::size_t groups) {
  HosmerLemeshow out;
  out.groups_requested = groups;
  double total = 0.0;
  for (const BinSums& s : sums) {
    total += s.weight;
    if (!(s.weight > 0.0)) continue;
    const double expected = s.forecast;
    const double variance = expected * (1.0 - expected / s.weight);
    if (!(variance > 0.0)) {
      ++out.degenerate_groups;
      continue;
    }
    ++out.used_groups;
    const double d = s.label - expected;
    out.statistic += d * d / variance;
  }
  detail::require_positive_total("hosmer_lemeshow", total);
  out.df = static_cast<double>(out.used_groups) - 2.0;
  if (out.df >= 1.0) {
    // Reference for the df: Hosmer and Lemeshow (1980), g - 2 for g groups.
    const boost::math::chi_squared_distribution<double> chi2(out.df);
    out.p_value = boost::math::cdf(boost::math::complement(chi2, out.statistic));
  } else {
    out.p_value = std::numeric_limits<double>::quiet_NaN();
  }
  return out;
}

SpiegelhalterZ spiegelhalter_z(std::span<const double> forecast, std::span<const double> label,
                               std::span<const double> weight) {
  detail::check_metric_input("spiegelhalter_z", forecast, label, weight);
  double numerator = 0.0, variance = 0.0, total = 0.0;
  for (std::size_t i = 0; i < forecast.size(); ++i) {
    const double w = detail::weight_at(weight, i);
    const double p = forecast[i];
    const double lever = 1.0 - 2.0 * p;
    numerator += w * (label[i] - p) * lever;
    variance += w * lever * lever * p * (1.0 - p);
    total += w;
  }
  detail::require_positive_total("spiegelhalter_z", total);
  return spiegelhalter_from_sums(numerator, variance);
}

SpiegelhalterZ spiegelhalter_from_sums(double numerator, double variance) {
  SpiegelhalterZ out;
  if (!(variance > 0.0)) {
    out.z = out.p_value = std::numeric_limits<double>::quiet_NaN();
    return out;
  }
  out.z = numerator / std::sqrt(variance);
  const boost::math::normal_distribution<double> normal;
  out.p_value = 2.0 * boost::math::cdf(boost::math::complement(normal, std::abs(out.z)));
  return out;
}

}  // namespace plumb
