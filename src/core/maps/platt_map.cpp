#include "plumb/maps/platt_map.hpp"

#include <vector>

#include "core/json_fields.hpp"
#include "core/maps/parametric_support.hpp"
#include "plumb/logistic.hpp"
#include "plumb/scale.hpp"

namespace plumb {

PlattMap::PlattMap(Scale scale, double a, double b, bool smoothed_targets) noexcept
    : scale_(scale), a_(a), b_(b), smoothed_targets_(smoothed_targets) {}

std::unique_ptr<CalibrationMap> PlattMap::fit(const FitData& data, const MapOptions& options) {
  const std::size_t n = data.score.size();
  const parametric::ClassTotals totals = parametric::class_totals(data);

  std::size_t clipped = 0;
  std::vector<double> f(n);
  for (std::size_t i = 0; i < n; ++i) {
    if (data.scale == Scale::probability) {
      bool c = false;
      f[i] = clipped_logit(data.score[i], &c);
      if (c && parametric::weight_at(data, i) > 0.0) ++clipped;
    } else {
      f[i] = data.score[i];
    }
  }

  // Platt (1999), regularisation of the targets: pulled away from 0 and 1 by a
  // Bayesian prior, so that a few rows cannot push the sigmoid to a step.
  std::vector<double> target(data.label.begin(), data.label.end());
  if (options.platt_smoothed_targets) {
    const double hi = (totals.positive + 1.0) / (totals.positive + 2.0);
    const double lo = 1.0 / (totals.negative + 2.0);
    for (double& t : target) t = t > 0.5 ? hi : lo;
  }

  const LogisticFit lf = fit_logistic(f, 1, target, data.weight, true, 100);
  // P(y = 1) = sigmoid(coef f + intercept) = 1 / (1 + exp(A f + B)).
  auto map = std::make_unique<PlattMap>(data.scale, -lf.coef[0], -lf.coef[1], options.platt_smoothed_targets);
  map->diagnostics_.iterations = lf.iterations;
  map->diagnostics_.converged = lf.converged;
  map->diagnostics_.clipped = clipped;
  if (options.platt_smoothed_targets)
    map->diagnostics_.notes.push_back("fitted to Platt's smoothed targets (weighted class totals)");
  if (!lf.converged)
    map->diagnostics_.notes.push_back(
        "the Newton iteration did not converge; the scores may separate the labels, so the sigmoid "
        "is steeper than the data can pin down");
  if (options.row_diagnostics) map->diagnostics_.log_loss = mean_log_loss(*map, data);
  return map;
}

std::unique_ptr<CalibrationMap> PlattMap::from_parameters(Scale scale, const nlohmann::json& parameters,
                                                          const std::string& where) {
  const double a = json_fields::require_finite(parameters, "a", where, "parameters.a");
  const double b = json_fields::require_finite(parameters, "b", where, "parameters.b");
  const bool smoothed = json_fields::require_bool(parameters, "smoothed_targets", where,
                                                  "parameters.smoothed_targets");
  return std::make_unique<PlattMap>(scale, a, b, smoothed);
}

Mapped PlattMap::map(double score) const noexcept {
  Mapped m{};
  double f = score;
  if (scale_ == Scale::probability) f = clipped_logit(score, &m.clipped);
  m.probability = sigmoid(-(a_ * f + b_));
  return m;
}

nlohmann::json PlattMap::parameters() const {
  return {{"a", a_}, {"b", b_}, {"smoothed_targets", smoothed_targets_}};
}

}  // namespace plumb
