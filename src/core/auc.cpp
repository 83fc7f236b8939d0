#include "plumb/auc.hpp"

#include <algorithm>
#include <limits>
#include <numeric>
#include <vector>

#include "core/metric_input.hpp"

namespace plumb {

double auc_sorted(std::span<const double> forecast, std::span<const double> label,
                  std::span<const double> weight) {
  detail::check_metric_input("auc", forecast, label, weight);
  const std::size_t n = forecast.size();
  double negatives_below = 0.0, wins = 0.0, positives = 0.0;
  for (std::size_t s = 0; s < n;) {
    double pos = 0.0, neg = 0.0;
    std::size_t e = s;
    for (; e < n && forecast[e] == forecast[s]; ++e) {
      const double w = detail::weight_at(weight, e);
      pos += w * label[e];
      neg += w * (1.0 - label[e]);
    }
    // Within a tie group every positive-negative pair counts one half.
    wins += pos * (negatives_below + 0.5 * neg);
    negatives_below += neg;
    positives += pos;
    s = e;
  }
  if (!(positives > 0.0) || !(negatives_below > 0.0))
    return std::numeric_limits<double>::quiet_NaN();
  return wins / (positives * negatives_below);
}

double auc_cells(std::span<const double> positives, std::span<const double> negatives) {
  if (positives.size() != negatives.size())
    throw Error(ErrorKind::internal, "auc_cells: positive and negative sums differ in length");
  double negatives_below = 0.0, wins = 0.0, total_positives = 0.0;
  for (std::size_t c = 0; c < positives.size(); ++c) {
    const double pos = positives[c], neg = negatives[c];
    wins += pos * (negatives_below + 0.5 * neg);
    negatives_below += neg;
    total_positives += pos;
  }
  if (!(total_positives > 0.0) || !(negatives_below > 0.0))
    return std::numeric_limits<double>::quiet_NaN();
  return wins / (total_positives * negatives_below);
}

double auc(std::span<const double> forecast, std::span<const double> label,
           std::span<const double> weight) {
  detail::check_metric_input("auc", forecast, label, weight);
  const std::size_t n = forecast.size();
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::sort(order.begin(), order.end(),
            [&](std::size_t a, std::size_t b) { return forecast[a] < forecast[b]; });
  std::vector<double> p(n), y(n), w(weight.empty() ? 0 : n);
  for (std::size_t k = 0; k < n; ++k) {
    p[k] = forecast[order[k]];
    y[k] = label[order[k]];
    if (!weight.empty()) w[k] = weight[order[k]];
  }
  return auc_sorted(p, y, w);
}

}  // namespace plumb
