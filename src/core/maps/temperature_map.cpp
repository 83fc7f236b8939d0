#include "plumb/maps/temperature_map.hpp"

#include <algorithm>
#include <cmath>
#include <string>
#include <limits>
#include <vector>

#include "core/json_fields.hpp"
#include "core/maps/parametric_support.hpp"
#include "plumb/error.hpp"
#include "plumb/scale.hpp"

namespace plumb {
namespace {

// First and second derivative of the weighted negative log-likelihood
// L(beta) = sum w [softplus(beta z) - y beta z] with respect to the slope
// beta = 1/T. L is convex in beta (L'' = sum w z^2 p (1 - p) >= 0).
struct Derivatives {
  double first = 0.0;
  double second = 0.0;
};

Derivatives derivatives(const std::vector<double>& z, const FitData& data, double beta) {
  Derivatives d;
  for (std::size_t i = 0; i < z.size(); ++i) {
    const double w = parametric::weight_at(data, i);
    if (!(w > 0.0)) continue;
    const double e = beta * z[i];
    const double p = sigmoid(e), q = sigmoid(-e);
    const double y = data.label[i] > 0.5 ? 1.0 : 0.0;
    d.first += w * z[i] * ((1.0 - y) * p - y * q);
    d.second += w * z[i] * z[i] * p * q;
  }
  return d;
}

constexpr int max_steps = 200;

}  // namespace

TemperatureMap::TemperatureMap(Scale scale, double temperature) noexcept
    : scale_(scale), temperature_(temperature) {}

std::unique_ptr<CalibrationMap> TemperatureMap::fit(const FitData& data, const MapOptions& options) {
  if (!accepts(data.scale))
    throw Error(ErrorKind::usage, "the temperature map does not accept margin scores", {}, {},
                "probability or logit scores");
  parametric::class_totals(data);

  const std::size_t n = data.score.size();
  std::size_t clipped = 0;
  std::vector<double> z(n);
  double scale_of_z = 0.0;  // sum w |z|, the natural size of L'
  bool separated = true;    // every row with z != 0 on the side of its label
  for (std::size_t i = 0; i < n; ++i) {
    bool c = false;
    z[i] = data.scale == Scale::probability ? clipped_logit(data.score[i], &c) : data.score[i];
    const double w = parametric::weight_at(data, i);
    if (!(w > 0.0)) continue;
    if (c) ++clipped;
    scale_of_z += w * std::abs(z[i]);
    const bool positive = data.label[i] > 0.5;
    if ((positive && z[i] < 0.0) || (!positive && z[i] > 0.0)) separated = false;
  }

  // Log-odds of extreme magnitude (near 1e300 or 1e-300 on the logit scale)
  // would overflow or underflow z^2 in L''. They are scaled by a power of two
  // to a largest magnitude in [1/2, 1) and the temperature is scaled back at
  // the end: the fit depends on z only through beta z, and a power of two
  // keeps the scaling exact. Ordinary log-odds (every probability score) are
  // used as given.
  double largest = 0.0;
  for (std::size_t i = 0; i < n; ++i)
    if (parametric::weight_at(data, i) > 0.0) largest = std::max(largest, std::abs(z[i]));
  int exponent = 0;
  if (largest > 0.0 && (largest > 0x1p32 || largest < 0x1p-32)) {
    exponent = std::ilogb(largest) + 1;
    for (double& v : z) v = std::ldexp(v, -exponent);
    scale_of_z = 0.0;
    for (std::size_t i = 0; i < n; ++i) {
      const double w = parametric::weight_at(data, i);
      if (w > 0.0) scale_of_z += w * std::abs(z[i]);
    }
  }

  // L is convex in beta, so the optimum is at beta > 0 exactly when L'(0) < 0.
  const double tolerance = 1e-12 * scale_of_z;
  const Derivatives at_zero = derivatives(z, data, 0.0);
  if (!(at_zero.first < -tolerance))
    throw Error(ErrorKind::fit,
                "the scores are not positively associated with the labels, so no temperature > 0 fits",
                {}, {}, "scores that rise with the chance of a positive label");

  // Safeguarded Newton: keep a bracket [lo, hi] around the root of L' and
  // fall back to bisection (or doubling while hi is unbounded) whenever the
  // Newton step leaves it.
  double lo = 0.0, hi = std::numeric_limits<double>::infinity();
  double beta = 1.0;  // T = 1, the identity on log-odds
  int steps = 0;
  bool converged = false;
  for (; steps < max_steps; ++steps) {
    const Derivatives d = derivatives(z, data, beta);
    if (std::abs(d.first) <= tolerance && !separated) {
      converged = true;
      break;
    }
    if (d.first < 0.0) lo = beta; else hi = beta;
    if (std::isfinite(hi) && hi - lo <= 1e-15 * hi) {
      converged = !separated;
      break;
    }
    double next = d.second > 0.0 ? beta - d.first / d.second : std::numeric_limits<double>::quiet_NaN();
    if (!(next > lo && next < hi)) next = std::isfinite(hi) ? 0.5 * (lo + hi) : 2.0 * beta;
    // A step below rounding level means L' cannot be driven any lower.
    const bool negligible = std::abs(next - beta) <= 1e-14 * beta;
    beta = next;
    if (negligible && !separated) {
      converged = true;
      ++steps;
      break;
    }
  }

  // T = 1 / (beta 2^-exponent), exact but for the one division.
  const double temperature = std::ldexp(1.0 / beta, exponent);
  if (!(temperature > 0.0) || !std::isfinite(temperature))
    throw Error(ErrorKind::fit,
                std::string("the fitted temperature is ") + (temperature > 0.0 ? "too large" : "too small") +
                    " for a double on the scale of these log-odds",
                {}, {}, "log-odds rescaled to ordinary magnitudes");
  auto map = std::make_unique<TemperatureMap>(data.scale, temperature);
  map->diagnostics_.iterations = steps;
  map->diagnostics_.converged = converged;
  map->diagnostics_.clipped = clipped;
  if (separated)
    map->diagnostics_.notes.push_back(
        "the log-odds separate the labels, so the best temperature is 0; stopped at a small "
        "temperature after a bounded number of steps");
  if (options.row_diagnostics) map->diagnostics_.log_loss = mean_log_loss(*map, data);
  return map;
}

std::unique_ptr<CalibrationMap> TemperatureMap::from_parameters(Scale scale, const nlohmann::json& parameters,
                                                                const std::string& where) {
  if (!accepts(scale)) json_fields::fail(where, "scale", "is margin", "probability or logit");
  const double t = json_fields::require_finite(parameters, "temperature", where, "parameters.temperature");
  if (!(t > 0.0)) json_fields::fail(where, "parameters.temperature", "is not positive", "a number > 0");
  return std::make_unique<TemperatureMap>(scale, t);
}

Mapped TemperatureMap::map(double score) const noexcept {
  Mapped m{};
  const double z = scale_ == Scale::probability ? clipped_logit(score, &m.clipped) : score;
  m.probability = sigmoid(z / temperature_);
  return m;
}

nlohmann::json TemperatureMap::parameters() const { return {{"temperature", temperature_}}; }

}  // namespace plumb
