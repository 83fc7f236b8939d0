#include "plumb/maps/beta_map.hpp"

#include <cmath>
#include <numbers>
#include <utility>
#include <vector>

#include "core/json_fields.hpp"
#include "core/maps/parametric_support.hpp"
#include "plumb/error.hpp"
#include "plumb/logistic.hpp"
#include "plumb/scale.hpp"

namespace plumb {
namespace {

constexpr int max_newton_steps = 100;

double clip_probability(double s, bool* clipped) noexcept {
  double q = s;
  if (q < probability_clip) q = probability_clip;
  if (q > 1.0 - probability_clip) q = 1.0 - probability_clip;
  if (clipped) *clipped = (q != s);
  return q;
}

// The two features of Kull et al. (2017), eq. for the beta map as a logistic
// regression: ln s and -ln(1 - s); `shift` = ln 2 gives the midpoint form's
// ln(2s) and -ln(2(1 - s)).
struct Features {
  std::vector<double> log_s;
  std::vector<double> neg_log_1ms;
};

Features make_features(const FitData& data, double shift, std::size_t* clipped) {
  const std::size_t n = data.score.size();
  Features f;
  f.log_s.resize(n);
  f.neg_log_1ms.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    bool c = false;
    const double s = clip_probability(data.score[i], &c);
    if (c && parametric::weight_at(data, i) > 0.0) ++*clipped;
    f.log_s[i] = std::log(s) + shift;
    f.neg_log_1ms[i] = -(std::log1p(-s) + shift);
  }
  return f;
}

struct Coefficients {
  double a = 0.0, b = 0.0, c = 0.0;
  int iterations = 0;
  bool converged = true;
};

void absorb(Coefficients& out, const LogisticFit& lf) {
  out.iterations += lf.iterations;
  out.converged = out.converged && lf.converged;
}

// Two features, optionally with an intercept; drops a feature whose
// coefficient comes out negative and refits (Kull et al. 2017, section on
// fitting: a negative a or b would make the map non-monotone).
Coefficients fit_two_features(const Features& f, const std::vector<double>& label, const FitData& data,
                              bool intercept, std::vector<std::string>& notes) {
  std::vector<double> both(f.log_s);
  both.insert(both.end(), f.neg_log_1ms.begin(), f.neg_log_1ms.end());
  Coefficients out;
  const LogisticFit full = fit_logistic(both, 2, label, data.weight, intercept, max_newton_steps);
  absorb(out, full);
  out.a = full.coef[0];
  out.b = full.coef[1];
  out.c = intercept ? full.coef[2] : 0.0;
  if (out.a >= 0.0 && out.b >= 0.0) return out;

  // Keep the feature whose coefficient was non-negative; if both were
  // negative keep the one with the larger coefficient.
  const bool keep_b = out.a < 0.0 && (out.b >= 0.0 || out.b > out.a);
  notes.push_back(std::string("the fitted ") + (keep_b ? "a" : "b") +
                  " was negative, so it was fixed at 0 and the rest refitted");
  const std::vector<double>& kept = keep_b ? f.neg_log_1ms : f.log_s;
  const LogisticFit one = fit_logistic(kept, 1, label, data.weight, intercept, max_newton_steps);
  absorb(out, one);
  const double coef = one.coef[0];
  out.a = keep_b ? 0.0 : coef;
  out.b = keep_b ? coef : 0.0;
  out.c = intercept ? one.coef[1] : 0.0;
  if (coef >= 0.0) return out;

  // The remaining feature is anti-associated too: the only monotone map left
  // is a constant.
  notes.push_back("the remaining coefficient was negative as well, so the map is a constant");
  out.a = 0.0;
  out.b = 0.0;
  if (intercept) {
    const LogisticFit constant = fit_logistic({}, 0, label, data.weight, true, max_newton_steps);
    absorb(out, constant);
    out.c = constant.coef[0];
  } else {
    out.c = 0.0;
  }
  return out;
}

}  // namespace

BetaMap::BetaMap(double a, double b, double c, std::string form) noexcept
    : a_(a), b_(b), c_(c), form_(std::move(form)) {}

std::unique_ptr<CalibrationMap> BetaMap::fit(const FitData& data, const MapOptions& options) {
  const std::string& form = options.beta_form;
  if (form != "full" && form != "midpoint" && form != "shared")
    throw Error(ErrorKind::usage, "unknown beta calibration form", {}, form, "full, midpoint or shared");
  if (data.scale != Scale::probability)
    throw Error(ErrorKind::usage, "the beta map needs scores on the probability scale");
  parametric::class_totals(data);

  const std::vector<double> label(data.label.begin(), data.label.end());
  std::size_t clipped = 0;
  std::vector<std::string> notes;
  Coefficients coef;
  if (form == "full") {
    const Features f = make_features(data, 0.0, &clipped);
    coef = fit_two_features(f, label, data, true, notes);
  } else if (form == "midpoint") {
    const Features f = make_features(data, std::numbers::ln2, &clipped);
    coef = fit_two_features(f, label, data, false, notes);
    coef.c = (coef.a - coef.b) * std::numbers::ln2;
  } else {
    const Features f = make_features(data, 0.0, &clipped);
    // a ln s - a ln(1 - s) = a logit(s), so the shared form is one feature.
    std::vector<double> logit(label.size());
    for (std::size_t i = 0; i < logit.size(); ++i) logit[i] = f.log_s[i] + f.neg_log_1ms[i];
    const LogisticFit lf = fit_logistic(logit, 1, label, data.weight, true, max_newton_steps);
    coef.iterations = lf.iterations;
    coef.converged = lf.converged;
    coef.a = coef.b = lf.coef[0];
    coef.c = lf.coef[1];
    if (coef.a < 0.0) {
      notes.push_back("the fitted slope was negative, so it was fixed at 0 (a constant map)");
      const LogisticFit constant = fit_logistic({}, 0, label, data.weight, true, max_newton_steps);
      absorb(coef, constant);
      coef.a = coef.b = 0.0;
      coef.c = constant.coef[0];
    }
  }

  auto map = std::make_unique<BetaMap>(coef.a, coef.b, coef.c, form);
  map->diagnostics_.iterations = coef.iterations;
  map->diagnostics_.converged = coef.converged;
  map->diagnostics_.clipped = clipped;
  map->diagnostics_.notes = std::move(notes);
  if (!coef.converged)
    map->diagnostics_.notes.push_back(
        "the Newton iteration did not converge; the scores may separate the labels");
  if (options.row_diagnostics) map->diagnostics_.log_loss = mean_log_loss(*map, data);
  return map;
}

std::unique_ptr<CalibrationMap> BetaMap::from_parameters(Scale scale, const nlohmann::json& parameters,
                                                         const std::string& where) {
  if (scale != Scale::probability)
    json_fields::fail(where, "scale", "is not probability", "a beta map holds probability scores");
  const double a = json_fields::require_finite(parameters, "a", where, "parameters.a");
  const double b = json_fields::require_finite(parameters, "b", where, "parameters.b");
  const double c = json_fields::require_finite(parameters, "c", where, "parameters.c");
  std::string form = json_fields::require_string(parameters, "form", where, "parameters.form");
  if (a < 0.0) json_fields::fail(where, "parameters.a", "is negative", "a number >= 0");
  if (b < 0.0) json_fields::fail(where, "parameters.b", "is negative", "a number >= 0");
  if (form == "shared") {
    if (a != b) json_fields::fail(where, "parameters.b", "differs from a in the shared form", "b equal to a");
  } else if (form == "midpoint") {
    const double expected = (a - b) * std::numbers::ln2;
    if (std::abs(c - expected) > 1e-12 * (1.0 + std::abs(a) + std::abs(b)))
      json_fields::fail(where, "parameters.c", "breaks the midpoint form", "c = (a - b) ln 2");
  } else if (form != "full") {
    json_fields::fail(where, "parameters.form", "is not a known form", "full, midpoint or shared");
  }
  return std::make_unique<BetaMap>(a, b, c, std::move(form));
}

Mapped BetaMap::map(double score) const noexcept {
  Mapped m{};
  const double s = clip_probability(score, &m.clipped);
  m.probability = sigmoid(a_ * std::log(s) - b_ * std::log1p(-s) + c_);
  return m;
}

nlohmann::json BetaMap::parameters() const { return {{"a", a_}, {"b", b_}, {"c", c_}, {"form", form_}}; }

}  // namespace plumb
