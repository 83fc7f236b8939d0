#include "plumb/maps/class_scaling_map.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <string>

#include "core/json_fields.hpp"
#include "plumb/error.hpp"
#include "plumb/number_text.hpp"

namespace plumb {
namespace jf = json_fields;
namespace {

using Form = ClassScalingMap::Form;

// The fit rows as the solver reads them: log-probabilities (rows x K),
// labels, weights > 0 only (rows of weight 0 add nothing).
struct Rows {
  std::size_t k = 0, n = 0;
  std::vector<double> l, w;
  std::vector<std::uint32_t> y;
  double total = 0.0;
  std::size_t clipped = 0;
};

Rows prepare(const ClassScores& d) {
  Rows r;
  r.k = d.k();
  r.l.resize(d.rows * r.k);
  r.w.reserve(d.rows);
  r.y.reserve(d.rows);
  std::size_t at = 0;
  for (std::size_t i = 0; i < d.rows; ++i) {
    const double w = d.weight.empty() ? 1.0 : d.weight[i];
    if (log_probabilities(d.row(i), r.k, d.scale, r.l.data() + at * r.k)) ++r.clipped;
    if (!(w > 0.0)) continue;
    r.w.push_back(w);
    r.y.push_back(d.label[i]);
    r.total += w;
    ++at;
  }
  r.n = at;
  r.l.resize(at * r.k);
  return r;
}

// log-sum-exp of k values.
double lse(const double* eta, std::size_t k) noexcept {
  double m = eta[0];
  for (std::size_t j = 1; j < k; ++j) m = std::max(m, eta[j]);
  double s = 0.0;
  for (std::size_t j = 0; j < k; ++j) s += std::exp(eta[j] - m);
  return m + std::log(s);
}

// ---- temperature: one slope beta = 1/T on l (Newton in beta; the mean log
// loss is convex in beta).
struct Temp {
  double f = 0.0, g = 0.0, h = 0.0;
};

Temp temperature_terms(const Rows& r, double beta, bool derivatives) {
  const std::size_t k = r.k;
  std::vector<double> eta(k), q(k);
  Temp t;
  for (std::size_t i = 0; i < r.n; ++i) {
    const double* l = r.l.data() + i * k;
    for (std::size_t j = 0; j < k; ++j) eta[j] = beta * l[j];
    const double z = lse(eta.data(), k);
    t.f += r.w[i] * (z - eta[r.y[i]]);
    if (!derivatives) continue;
    double m1 = 0.0, m2 = 0.0;
    for (std::size_t j = 0; j < k; ++j) {
      const double qj = std::exp(eta[j] - z);
      m1 += qj * l[j];
      m2 += qj * l[j] * l[j];
    }
    t.g += r.w[i] * (m1 - l[r.y[i]]);
    t.h += r.w[i] * std::max(0.0, m2 - m1 * m1);
  }
  t.f /= r.total;
  t.g /= r.total;
  t.h /= r.total;
  return t;
}

// ---- vector and dirichlet: M is K x (K+1) (W, then b as the last column);
// the free entries are the parameters.
struct Param {
  std::size_t c, f;  // class (row of M) and feature (column: l_f, or K for the bias)
  bool penalised;
};

std::vector<Param> free_parameters(Form form, std::size_t k) {
  std::vector<Param> p;
  for (std::size_t c = 0; c < k; ++c)
    for (std::size_t f = 0; f <= k; ++f) {
      if (form == Form::vector && f != c && f != k) continue;
      p.push_back({c, f, form == Form::dirichlet && f != c});
    }
  return p;
}

struct Terms {
  double f = 0.0;       // mean log loss + penalty
  double loss = 0.0;    // mean log loss
  Eigen::VectorXd g;
  Eigen::MatrixXd h;
};

Terms linear_terms(const Rows& r, const std::vector<double>& m, const std::vector<Param>& ps, double l2,
                   bool derivatives) {
  const std::size_t k = r.k, d = k + 1, np = ps.size();
  std::vector<double> x(d), eta(k), q(k);
  Terms t;
  if (derivatives) {
    t.g = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(np));
    t.h = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(np), static_cast<Eigen::Index>(np));
  }
  std::vector<double> g(derivatives ? np : 0), h(derivatives ? np * np : 0);
  for (std::size_t i = 0; i < r.n; ++i) {
    const double* l = r.l.data() + i * k;
    for (std::size_t j = 0; j < k; ++j) x[j] = l[j];
    x[k] = 1.0;
    for (std::size_t c = 0; c < k; ++c) {
      double s = 0.0;
      for (std::size_t f = 0; f < d; ++f) s += m[c * d + f] * x[f];
      eta[c] = s;
    }
    const double z = lse(eta.data(), k);
    const double w = r.w[i];
    const std::uint32_t y = r.y[i];
    t.loss += w * (z - eta[y]);
    if (!derivatives) continue;
    for (std::size_t c = 0; c < k; ++c) q[c] = std::exp(eta[c] - z);
    for (std::size_t a = 0; a < np; ++a) {
      const Param& pa = ps[a];
      const double xa = w * x[pa.f];
      g[a] += xa * (q[pa.c] - (pa.c == y ? 1.0 : 0.0));
      double* row = h.data() + a * np;
      for (std::size_t b = a; b < np; ++b) {
        const Param& pb = ps[b];
        const double s = (pa.c == pb.c ? q[pa.c] : 0.0) - q[pa.c] * q[pb.c];
        row[b] += xa * x[pb.f] * s;
      }
    }
  }
  t.loss /= r.total;
  t.f = t.loss;
  for (std::size_t a = 0; a < np; ++a) {
    const double v = m[ps[a].c * d + ps[a].f];
    if (ps[a].penalised) t.f += l2 * v * v;
  }
  if (!derivatives) return t;
  for (std::size_t a = 0; a < np; ++a) {
    const auto ia = static_cast<Eigen::Index>(a);
    t.g(ia) = g[a] / r.total;
    for (std::size_t b = a; b < np; ++b) {
      const auto ib = static_cast<Eigen::Index>(b);
      t.h(ia, ib) = t.h(ib, ia) = h[a * np + b] / r.total;
    }
    if (ps[a].penalised) {
      t.g(ia) += 2.0 * l2 * m[ps[a].c * d + ps[a].f];
      t.h(ia, ia) += 2.0 * l2;
    }
  }
  return t;
}

constexpr double gradient_tolerance = 1e-10;
constexpr double decrement_tolerance = 1e-15;

std::string form_name(Form f) {
  return f == Form::temperature ? "temperature" : f == Form::vector ? "vector" : "dirichlet";
}

std::vector<double> require_length(const nlohmann::json& p, std::string_view key, std::size_t k,
                                   const std::string& where, const std::string& path) {
  std::vector<double> v = jf::require_finite_array(p, key, where, path);
  if (v.size() != k)
    jf::fail(where, path, "holds " + std::to_string(v.size()) + " numbers",
             std::to_string(k) + " numbers, one per class");
  return v;
}

}  // namespace

ClassScalingMap::ClassScalingMap(Form form, std::vector<std::string> classes, ClassScale scale,
                                 std::vector<double> matrix, std::vector<double> bias, double l2)
    : ClassCalibrationMap(std::move(classes), scale),
      form_(form),
      matrix_(std::move(matrix)),
      bias_(std::move(bias)),
      l2_(l2) {}

std::string_view ClassScalingMap::kind() const noexcept {
  return form_ == Form::temperature ? "temperature" : form_ == Form::vector ? "vector" : "dirichlet";
}

bool ClassScalingMap::map(const double* in, double* out) const noexcept {
  const std::size_t k = classes_.size();
  // K is small (a classifier's classes); the stack holds common sizes.
  double l_small[16], eta_small[16];
  std::vector<double> l_big, eta_big;
  double* l = l_small;
  double* eta = eta_small;
  if (k > 16) {
    l_big.resize(k);
    eta_big.resize(k);
    l = l_big.data();
    eta = eta_big.data();
  }
  const bool raised = log_probabilities(in, k, scale_, l);
  if (form_ == Form::temperature) {
    const double t = matrix_[0];  // T itself for temperature (see fit)
    for (std::size_t j = 0; j < k; ++j) eta[j] = l[j] / t;
  } else if (form_ == Form::vector) {
    for (std::size_t j = 0; j < k; ++j) eta[j] = matrix_[j * k + j] * l[j] + bias_[j];
  } else {
    for (std::size_t c = 0; c < k; ++c) {
      double s = 0.0;
      for (std::size_t j = 0; j < k; ++j) s += matrix_[c * k + j] * l[j];
      eta[c] = s + bias_[c];
    }
  }
  softmax(eta, k, out);
  return raised;
}

nlohmann::json ClassScalingMap::parameters() const {
  const std::size_t k = classes_.size();
  if (form_ == Form::temperature) return {{"temperature", matrix_[0]}};
  if (form_ == Form::vector) {
    std::vector<double> a(k);
    for (std::size_t j = 0; j < k; ++j) a[j] = matrix_[j * k + j];
    return {{"scale", a}, {"bias", bias_}};
  }
  nlohmann::json rows = nlohmann::json::array();
  for (std::size_t c = 0; c < k; ++c)
    rows.push_back(std::vector<double>(matrix_.begin() + static_cast<std::ptrdiff_t>(c * k),
                                       matrix_.begin() + static_cast<std::ptrdiff_t>((c + 1) * k)));
  return {{"l2", l2_}, {"matrix", rows}, {"bias", bias_}};
}

std::unique_ptr<ClassCalibrationMap> ClassScalingMap::load(Form form, std::vector<std::string> classes,
                                                           ClassScale scale, const nlohmann::json& p,
                                                           const std::string& where) {
  const std::size_t k = classes.size();
  if (form == Form::temperature) {
    const double t = jf::require_finite(p, "temperature", where, "parameters.temperature");
    if (!(t > 0.0)) jf::fail(where, "parameters.temperature", "is not positive", "a temperature > 0");
    return std::make_unique<ClassScalingMap>(form, std::move(classes), scale, std::vector<double>{t},
                                             std::vector<double>(k, 0.0), 0.0);
  }
  std::vector<double> bias = require_length(p, "bias", k, where, "parameters.bias");
  std::vector<double> m(k * k, 0.0);
  double l2 = 0.0;
  if (form == Form::vector) {
    const std::vector<double> a = require_length(p, "scale", k, where, "parameters.scale");
    for (std::size_t j = 0; j < k; ++j) m[j * k + j] = a[j];
  } else {
    l2 = jf::require_finite(p, "l2", where, "parameters.l2");
    if (!(l2 >= 0.0)) jf::fail(where, "parameters.l2", "is negative", "an L2 weight >= 0");
    const nlohmann::json& rows = jf::require(p, "matrix", where, "parameters.matrix");
    if (!rows.is_array() || rows.size() != k)
      jf::fail(where, "parameters.matrix", "is not an array of " + std::to_string(k) + " rows",
               "a K x K matrix, one row per class");
    for (std::size_t c = 0; c < k; ++c) {
      const std::string path = "parameters.matrix[" + std::to_string(c) + "]";
      if (!rows[c].is_array() || rows[c].size() != k)
        jf::fail(where, path, "is not an array of " + std::to_string(k) + " numbers", "one number per class");
      for (std::size_t j = 0; j < k; ++j) {
        const nlohmann::json& v = rows[c][j];
        if (!v.is_number() || !std::isfinite(v.get<double>()))
          jf::fail(where, path, "holds a value that is not a finite number", "finite numbers");
        m[c * k + j] = v.get<double>();
      }
    }
  }
  return std::make_unique<ClassScalingMap>(form, std::move(classes), scale, std::move(m), std::move(bias), l2);
}

std::unique_ptr<ClassCalibrationMap> ClassScalingMap::fit(Form form, const ClassScores& data,
                                                          const ClassMapOptions& options) {
  const Rows r = prepare(data);
  const std::size_t k = r.k, d = k + 1;
  FitDiagnostics diag;
  diag.clipped = r.clipped;
  std::unique_ptr<ClassScalingMap> out;

  if (form == Form::temperature) {
    double beta = 1.0;
    Temp t = temperature_terms(r, beta, true);
    int it = 0;
    bool converged = false;
    for (; it < max_class_newton_steps; ++it) {
      if (std::fabs(t.g) <= gradient_tolerance) {
        converged = true;
        break;
      }
      double step = t.h > 0.0 ? -t.g / t.h : -t.g;
      if (t.h > 0.0 && 0.5 * t.g * t.g / t.h <= decrement_tolerance * (1.0 + std::fabs(t.f))) {
        converged = true;
        break;
      }
      // Keep beta > 0: a step across 0 is cut to half the way there.
      if (beta + step <= 0.0) step = -0.5 * beta;
      double f_new = 0.0;
      bool accepted = false;
      for (int halvings = 0; halvings < 60; ++halvings, step *= 0.5) {
        f_new = temperature_terms(r, beta + step, false).f;
        if (f_new <= t.f + 1e-4 * step * t.g) {
          accepted = true;
          break;
        }
      }
      if (!accepted) {
        converged = std::fabs(t.g) <= 1e-6;
        break;
      }
      beta += step;
      t = temperature_terms(r, beta, true);
    }
    diag.iterations = it;
    diag.converged = converged;
    out = std::make_unique<ClassScalingMap>(form, data.classes, data.scale, std::vector<double>{1.0 / beta},
                                            std::vector<double>(k, 0.0), 0.0);
  } else {
    const std::vector<Param> ps = free_parameters(form, k);
    const double l2 = form == Form::dirichlet ? options.l2 : 0.0;
    std::vector<double> m(k * d, 0.0);
    for (std::size_t c = 0; c < k; ++c) m[c * d + c] = 1.0;
    Terms t = linear_terms(r, m, ps, l2, true);
    int it = 0;
    bool converged = false;
    for (; it < max_class_newton_steps; ++it) {
      if (t.g.lpNorm<Eigen::Infinity>() <= gradient_tolerance) {
        converged = true;
        break;
      }
      // The loss is flat along a shift of every bias (and, without L2, of
      // a column of W): a small ridge keeps the system solvable, and the
      // gradient has no part along those directions.
      Eigen::MatrixXd h = t.h;
      const double ridge = 1e-12 * std::max(1.0, h.diagonal().maxCoeff());
      h.diagonal().array() += ridge;
      const Eigen::VectorXd step = h.ldlt().solve(-t.g);
      const double slope = t.g.dot(step);
      if (!(slope < 0.0) || !step.allFinite()) break;
      // The Newton decrement: half of it bounds what the step can still gain
      // (Boyd and Vandenberghe 2004, 9.5.1); once it is below the rounding of
      // the objective, a smaller gradient cannot be reached.
      if (-0.5 * slope <= decrement_tolerance * (1.0 + std::fabs(t.f))) {
        converged = true;
        break;
      }
      double scale = 1.0;
      bool accepted = false;
      std::vector<double> trial(m);
      for (int halvings = 0; halvings < 60; ++halvings, scale *= 0.5) {
        trial = m;
        for (std::size_t a = 0; a < ps.size(); ++a)
          trial[ps[a].c * d + ps[a].f] += scale * step(static_cast<Eigen::Index>(a));
        if (linear_terms(r, trial, ps, l2, false).f <= t.f + 1e-4 * scale * slope) {
          accepted = true;
          break;
        }
      }
      if (!accepted) {
        converged = t.g.lpNorm<Eigen::Infinity>() <= 1e-6;
        break;
      }
      m = trial;
      t = linear_terms(r, m, ps, l2, true);
    }
    diag.iterations = it;
    diag.converged = converged;
    // A common shift of the biases changes no probability: centre them.
    double mean_b = 0.0;
    for (std::size_t c = 0; c < k; ++c) mean_b += m[c * d + k];
    mean_b /= static_cast<double>(k);
    std::vector<double> w(k * k), b(k);
    for (std::size_t c = 0; c < k; ++c) {
      for (std::size_t j = 0; j < k; ++j) w[c * k + j] = m[c * d + j];
      b[c] = m[c * d + k] - mean_b;
    }
    out = std::make_unique<ClassScalingMap>(form, data.classes, data.scale, std::move(w), std::move(b), l2);
  }
  if (!diag.converged)
    diag.notes.push_back("the " + form_name(form) + " fit did not converge in " +
                         std::to_string(max_class_newton_steps) +
                         " Newton steps (rows a map can separate, or log-probabilities so nearly collinear that the optimum lies far "
                         "out, have no finite optimum; an L2 penalty gives one)");
  if (diag.clipped > 0)
    diag.notes.push_back(count_text(diag.clipped) + " rows hold a probability below " +
                         shortest_text(class_probability_floor) + ", raised to it before its logarithm");
  out->diagnostics_ = std::move(diag);
  out->diagnostics_.log_loss = class_log_loss(*out, data);
  return out;
}

}  // namespace plumb
