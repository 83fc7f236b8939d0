#include "plumb/corp.hpp"

#include <utility>

#include "core/metric_input.hpp"
#include "plumb/pav.hpp"
#include "plumb/scores.hpp"

namespace plumb {

CorpDecomposition corp_decomposition(std::span<const double> forecast,
                                     std::span<const double> label,
                                     std::span<const double> weight) {
  detail::check_metric_input("corp_decomposition", forecast, label, weight);
  return corp_decomposition_given(forecast, label, weight, pav_values(forecast, label, weight));
}

CorpDecomposition corp_decomposition_given(std::span<const double> forecast,
                                           std::span<const double> label,
                                           std::span<const double> weight,
                                           std::vector<double> recalibrated) {
  detail::check_metric_input("corp_decomposition", forecast, label, weight);
  if (recalibrated.size() != forecast.size())
    throw Error(ErrorKind::internal, "corp_decomposition: one recalibrated value per row expected");
  CorpDecomposition out;
  out.recalibrated = std::move(recalibrated);

  double total = 0.0, positives = 0.0;
  for (std::size_t i = 0; i < forecast.size(); ++i) {
    const double w = detail::weight_at(weight, i);
    total += w;
    positives += w * label[i];
  }
  detail::require_positive_total("corp_decomposition", total);
  const double rate = positives / total;

  double brier_x = 0.0, brier_pav = 0.0, brier_clim = 0.0;
  double log_x = 0.0, log_pav = 0.0, log_clim = 0.0;
  for (std::size_t i = 0; i < forecast.size(); ++i) {
    const double w = detail::weight_at(weight, i);
    if (w == 0.0) continue;  // such rows have no PAV value of their own
    const double y = label[i], x = forecast[i], r = out.recalibrated[i];
    brier_x += w * (x - y) * (x - y);
    brier_pav += w * (r - y) * (r - y);
    brier_clim += w * (rate - y) * (rate - y);
    log_x += w * log_loss_term(x, y);
    log_pav += w * log_loss_term(r, y);
    log_clim += w * log_loss_term(rate, y);
  }
  out.brier = corp_terms(brier_x, brier_pav, brier_clim, total);
  out.log_loss = corp_terms(log_x, log_pav, log_clim, total);
  return out;
}

CorpTerms corp_terms(double s_x, double s_pav, double s_clim, double total) noexcept {
  CorpTerms t;
  t.score = s_x / total;
  t.mcb = (s_x - s_pav) / total;
  t.dsc = (s_clim - s_pav) / total;
  t.unc = s_clim / total;
  return t;
}

}  // namespace plumb
