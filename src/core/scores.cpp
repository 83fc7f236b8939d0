#include "plumb/scores.hpp"

#include <algorithm>
#include <cmath>

#include "core/metric_input.hpp"
#include "plumb/scale.hpp"

namespace plumb {

double log_loss_term(double forecast, double label) noexcept {
  const double p = std::clamp(forecast, probability_clip, 1.0 - probability_clip);
  // Skipping a zero-weighted log keeps fractional labels exact and avoids 0 * log.
  double loss = 0.0;
  if (label != 0.0) loss -= label * std::log(p);
  if (label != 1.0) loss -= (1.0 - label) * std::log1p(-p);
  return loss;
}

double brier_score(std::span<const double> forecast, std::span<const double> label,
                   std::span<const double> weight) {
  detail::check_metric_input("brier_score", forecast, label, weight);
  double total = 0.0, sum = 0.0;
  for (std::size_t i = 0; i < forecast.size(); ++i) {
    const double w = detail::weight_at(weight, i);
    const double d = forecast[i] - label[i];
    sum += w * d * d;
    total += w;
  }
  detail::require_positive_total("brier_score", total);
  return sum / total;
}

double log_loss(std::span<const double> forecast, std::span<const double> label,
                std::span<const double> weight) {
  detail::check_metric_input("log_loss", forecast, label, weight);
  double total = 0.0, sum = 0.0;
  for (std::size_t i = 0; i < forecast.size(); ++i) {
    const double w = detail::weight_at(weight, i);
    if (w == 0.0) continue;
    sum += w * log_loss_term(forecast[i], label[i]);
    total += w;
  }
  detail::require_positive_total("log_loss", total);
  return sum / total;
}

}  // namespace plumb
