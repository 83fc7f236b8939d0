#include "plumb/logistic.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <vector>

#include "plumb/error.hpp"
#include "plumb/scale.hpp"

namespace plumb {
namespace {

// softplus(x) = log(1 + exp(x)), computed as x > 0 ? x + log1p(exp(-x)) :
// log1p(exp(x)) so that it neither overflows for large x nor loses the small
// value for very negative x (Lin, Lin and Weng 2007, section 3).
// softplus(e), softplus(-e), sigmoid(e) and sigmoid(-e) (scale.hpp) all come
// from a = exp(-|e|): each expression below equals, bit for bit, that
// formula (both branch on the sign and exponentiate the non-positive side),
// so one exp and one log1p serve all four. The entries the maps fit on
// come in pairs of one score (a negative and a positive sum), so the last
// value is kept and reused when the next entry has the same linear predictor.
class Terms {
 public:
  void at(double e) noexcept {
    if (valid_ && same(e, e_)) return;
    valid_ = true;
    e_ = e;
    a_ = std::exp(-std::abs(e));
    l_ = std::log1p(a_);
  }
  // As at(e), taking a_ and l_ from (e, a, l) when e is that value exactly.
  void at(double e, double cached_e, double cached_a, double cached_l) noexcept {
    if (valid_ && same(e, e_)) return;
    if (!same(e, cached_e)) return at(e);
    valid_ = true;
    e_ = e;
    a_ = cached_a;
    l_ = cached_l;
  }
  double e() const noexcept { return e_; }
  double a() const noexcept { return a_; }
  double l() const noexcept { return l_; }
  static bool same(double x, double y) noexcept { return x == y && std::signbit(x) == std::signbit(y); }
  double softplus_pos() const noexcept { return e_ > 0 ? e_ + l_ : l_; }    // softplus(e)
  double softplus_neg() const noexcept { return -e_ > 0 ? -e_ + l_ : l_; }  // softplus(-e)
  double sigmoid_pos() const noexcept { return e_ >= 0 ? 1.0 / (1.0 + a_) : a_ / (1.0 + a_); }  // sigmoid(e)
  double sigmoid_neg() const noexcept { return -e_ >= 0 ? 1.0 / (1.0 + a_) : a_ / (1.0 + a_); }  // sigmoid(-e)

 private:
  bool valid_ = false;
  double e_ = 0.0, a_ = 0.0, l_ = 0.0;
};

// The rows a fit reads. ColumnRows: k feature columns, column-major (feature
// j of row i at x[j * n + i]), a target and a weight per row (no weights:
// all 1); the solver keeps a cache of each row's exp and log1p terms.
// PairedRows: one feature per distinct value c, standing for two rows, 2c
// of target 1 and weight positive[c], then 2c + 1 of target 0 and weight
// negative[c]; no cache (the pairs are what keeps the memory down, and the
// terms it would hold are recomputed to the same bits).
struct ColumnRows {
  static constexpr bool keeps_cache = true;
  std::span<const double> x, t, w;
  std::size_t n = 0;
  std::size_t size() const noexcept { return n; }
  double feature(std::size_t j, std::size_t i) const noexcept { return x[j * n + i]; }
  double target(std::size_t i) const noexcept { return t[i]; }
  double weight(std::size_t i) const noexcept { return w.empty() ? 1.0 : w[i]; }
};

struct PairedRows {
  static constexpr bool keeps_cache = false;
  std::span<const double> x, positive, negative;
  std::size_t size() const noexcept { return 2 * x.size(); }
  double feature(std::size_t, std::size_t i) const noexcept { return x[i >> 1]; }
  double target(std::size_t i) const noexcept { return (i & 1) ? 0.0 : 1.0; }
  double weight(std::size_t i) const noexcept { return (i & 1) ? negative[i >> 1] : positive[i >> 1]; }
};

// Everything one Newton iteration needs at the current coefficients.
struct Evaluation {
  double loss = 0.0;  // weighted negative log-likelihood
  Eigen::VectorXd gradient;
  Eigen::MatrixXd hessian;
};

template <class Rows>
class Problem {
 public:
  Problem(Rows rows, std::size_t k, bool intercept) : rows_(rows), k_(k), n_(rows.size()), intercept_(intercept) {}

  std::size_t dim() const noexcept { return k_ + (intercept_ ? 1 : 0); }
  double weight(std::size_t i) const noexcept { return rows_.weight(i); }
  double feature(std::size_t j, std::size_t i) const noexcept { return j < k_ ? rows_.feature(j, i) : 1.0; }
  double target(std::size_t i) const noexcept { return rows_.target(i); }
  static constexpr bool keeps_cache = Rows::keeps_cache;

  double eta(const Eigen::VectorXd& beta, std::size_t i) const noexcept {
    double e = 0.0;
    for (std::size_t j = 0; j < dim(); ++j) e += beta[static_cast<Eigen::Index>(j)] * feature(j, i);
    return e;
  }

  // (1-t) softplus(eta) + t softplus(-eta) equals softplus(eta) - t eta but
  // stays accurate and non-negative when |eta| is large.
  double loss(const Eigen::VectorXd& beta) const {
    switch (dim()) {
      case 1: return loss_fixed<1>(beta);
      case 2: return loss_fixed<2>(beta);
      case 3: return loss_fixed<3>(beta);
      default: break;
    }
    double total = 0.0;
    Terms terms;
    if constexpr (keeps_cache) cache_.resize(3 * n_);
    for (std::size_t i = 0; i < n_; ++i) {
      const double w = weight(i);
      if (!(w > 0.0)) continue;
      terms.at(eta(beta, i));
      if constexpr (keeps_cache) {
        cache_[3 * i] = terms.e();
        cache_[3 * i + 1] = terms.a();
        cache_[3 * i + 2] = terms.l();
      }
      total += w * entry_loss(terms, target(i));
    }
    return total;
  }

  // loss() for D coefficients, a constant so that the loops over them
  // unroll: the same predictor as eta() (0 plus each beta_j x_j in turn),
  // so the same values.
  template <std::size_t D>
  double loss_fixed(const Eigen::VectorXd& beta) const {
    double b[D];
    for (std::size_t j = 0; j < D; ++j) b[j] = beta[static_cast<Eigen::Index>(j)];
    double total = 0.0;
    Terms terms;
    if constexpr (keeps_cache) cache_.resize(3 * n_);
    for (std::size_t i = 0; i < n_; ++i) {
      const double w = weight(i);
      if (!(w > 0.0)) continue;
      double e = 0.0;
      for (std::size_t j = 0; j < D; ++j) e += b[j] * feature(j, i);
      terms.at(e);
      if constexpr (keeps_cache) {
        cache_[3 * i] = terms.e();
        cache_[3 * i + 1] = terms.a();
        cache_[3 * i + 2] = terms.l();
      }
      total += w * entry_loss(terms, target(i));
    }
    return total;
  }

  // (1-t) softplus(e) + t softplus(-e), the loss of one entry of target t.
  // For t exactly 0 or 1 and a finite e the sum has one term: (1-0) s + 0 s'
  // is s + (+0), which is s, since a softplus is finite and never -0 (and
  // (1-1) s + 1 s' likewise s'); an infinite e takes the full formula, whose
  // 0 * inf is NaN.
  static double entry_loss(const Terms& terms, double t) noexcept {
    if (std::isfinite(terms.e())) {
      if (t == 0.0) return terms.softplus_pos();
      if (t == 1.0) return terms.softplus_neg();
    }
    return (1.0 - t) * terms.softplus_pos() + t * terms.softplus_neg();
  }

  Evaluation evaluate(const Eigen::VectorXd& beta) const {
    if (dim() <= small_dim) return evaluate_small(beta);
    const auto d = static_cast<Eigen::Index>(dim());
    Evaluation ev;
    ev.gradient = Eigen::VectorXd::Zero(d);
    ev.hessian = Eigen::MatrixXd::Zero(d, d);
    Eigen::VectorXd row(d);
    Terms terms;
    for (std::size_t i = 0; i < n_; ++i) {
      const double w = weight(i);
      if (!(w > 0.0)) continue;
      for (Eigen::Index j = 0; j < d; ++j) row[j] = feature(static_cast<std::size_t>(j), i);
      if (cache_.empty())
        terms.at(row.dot(beta));
      else
        terms.at(row.dot(beta), cache_[3 * i], cache_[3 * i + 1], cache_[3 * i + 2]);
      const double p = terms.sigmoid_pos(), q = terms.sigmoid_neg();
      // p - t written so that it does not cancel to zero when p rounds to 1.
      const double t = target(i);
      const double residual = (1.0 - t) * p - t * q;
      ev.loss += w * ((1.0 - t) * terms.softplus_pos() + t * terms.softplus_neg());
      ev.gradient += (w * residual) * row;
      ev.hessian.selfadjointView<Eigen::Lower>().rankUpdate(row, w * p * q);
    }
    ev.hessian = ev.hessian.selfadjointView<Eigen::Lower>();
    return ev;
  }

  // evaluate() for at most three coefficients (every map's fit: platt two,
  // beta three), on plain arrays instead of Eigen's dynamic-size vectors and
  // its out-of-line rank-one update. Each operation is the one Eigen does,
  // in its order, so the result is the same bit for bit: the dot product of
  // up to three terms is summed left to right (Eigen's packet of two, then
  // the third), the gradient takes g_j + (w r) x_j, and the rank-one update
  // of the lower triangle h_rc + (a x_c) x_r for r >= c, a = w p q
  // (selfadjoint_rank1_update of Eigen 3.4). No fused multiply-add: the
  // build targets the baseline instruction set, as Eigen's packets do.
  static constexpr std::size_t small_dim = 3;
  Evaluation evaluate_small(const Eigen::VectorXd& beta) const {
    switch (dim()) {
      case 1: return evaluate_fixed<1>(beta);
      case 2: return evaluate_fixed<2>(beta);
      default: return evaluate_fixed<3>(beta);
    }
  }

  // evaluate_small for D coefficients, a constant so that the loops over
  // them unroll. Entries of one score follow each other with the same linear
  // predictor: its sigmoids and softpluses are worked out once (the same
  // expressions of the same e, a and l, so the same values). Entries of
  // target exactly 0 or 1 take the one term of the residual and the loss
  // that does not vanish: (1-0) p - 0 q is p - (+0), which is p, and
  // (1-1) p - 1 q is +0 - q, written so (p and q lie in [0, 1]); the loss as
  // in entry_loss. A non-finite e takes the full formulas.
  template <std::size_t D>
  Evaluation evaluate_fixed(const Eigen::VectorXd& beta) const {
    double b[D], g[D], x[D];
    double h[D][D] = {};
    for (std::size_t j = 0; j < D; ++j) {
      b[j] = beta[static_cast<Eigen::Index>(j)];
      g[j] = 0.0;
    }
    double total = 0.0;
    Terms terms;
    const bool cached = keeps_cache && !cache_.empty();
    bool have = false;
    double last_e = 0.0, p = 0.0, q = 0.0, sp_pos = 0.0, sp_neg = 0.0;
    bool finite = true;
    for (std::size_t i = 0; i < n_; ++i) {
      const double w = weight(i);
      if (!(w > 0.0)) continue;
      for (std::size_t j = 0; j < D; ++j) x[j] = feature(j, i);
      double e = x[0] * b[0];
      for (std::size_t j = 1; j < D; ++j) e += x[j] * b[j];
      if (!have || !Terms::same(e, last_e)) {
        if (cached)
          terms.at(e, cache_[3 * i], cache_[3 * i + 1], cache_[3 * i + 2]);
        else
          terms.at(e);
        have = true;
        last_e = e;
        p = terms.sigmoid_pos();
        q = terms.sigmoid_neg();
        sp_pos = terms.softplus_pos();
        sp_neg = terms.softplus_neg();
        finite = std::isfinite(e);
      }
      const double t = target(i);
      double residual, loss;
      if (finite && t == 0.0) {
        residual = p;
        loss = sp_pos;
      } else if (finite && t == 1.0) {
        residual = 0.0 - q;
        loss = sp_neg;
      } else {
        residual = (1.0 - t) * p - t * q;
        loss = (1.0 - t) * sp_pos + t * sp_neg;
      }
      total += w * loss;
      const double gs = w * residual;
      for (std::size_t j = 0; j < D; ++j) g[j] += gs * x[j];
      const double a = w * p * q;
      for (std::size_t c = 0; c < D; ++c) {
        const double ac = a * x[c];
        for (std::size_t r = c; r < D; ++r) h[r][c] += ac * x[r];
      }
    }
    Evaluation ev;
    const auto dd = static_cast<Eigen::Index>(D);
    ev.loss = total;
    ev.gradient.resize(dd);
    ev.hessian.resize(dd, dd);
    for (std::size_t r = 0; r < D; ++r) {
      ev.gradient[static_cast<Eigen::Index>(r)] = g[r];
      for (std::size_t c = 0; c < D; ++c)
        ev.hessian(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(c)) = r >= c ? h[r][c] : h[c][r];
    }
    return ev;
  }

  // Per-coordinate gradient tolerance: relative to the weighted size of the
  // feature, so that rescaling a feature does not change when the fit stops.
  Eigen::VectorXd gradient_tolerance() const {
    const auto d = static_cast<Eigen::Index>(dim());
    Eigen::VectorXd tol = Eigen::VectorXd::Zero(d);
    for (std::size_t i = 0; i < n_; ++i) {
      const double w = weight(i);
      if (!(w > 0.0)) continue;
      for (Eigen::Index j = 0; j < d; ++j) tol[j] += w * std::abs(feature(static_cast<std::size_t>(j), i));
    }
    return 1e-10 * tol;
  }

  // Largest change of the linear predictor over the rows that count.
  double max_eta_change(const Eigen::VectorXd& step) const noexcept {
    double m = 0.0;
    for (std::size_t i = 0; i < n_; ++i) {
      if (!(weight(i) > 0.0)) continue;
      m = std::max(m, std::abs(eta(step, i)));
    }
    return m;
  }

 private:
  Rows rows_;
  std::size_t k_;
  std::size_t n_;
  bool intercept_;
  // Per entry, the linear predictor of the last loss() and its exp(-|e|)
  // and log1p of that: the accepted step of a line search is the next
  // point evaluate() visits, so its terms are taken from here when the
  // predictor comes out the same (compared exactly, so nothing changes).
  mutable std::vector<double> cache_;
};

// The largest magnitude of each feature over the rows that count, as the
// power of two to divide it by (0: used as given). Features of extreme
// magnitude (margins near 1e300, or near 1e-300) would overflow or
// underflow the Hessian's x^2 terms, and the solver would stop at once with
// a zero step. Such a column is scaled by a power of two to a largest
// magnitude in [1/2, 1); the fit is equivariant under the scaling
// (eta = beta x), and a power of two keeps it exact, so the coefficient is
// scaled back by the same power at the end. Ordinary columns are left as
// they are, so their fits do not change by a bit.
template <class Rows>
std::vector<int> scale_exponents(const Rows& rows, std::size_t k) {
  std::vector<int> exponent(k, 0);
  for (std::size_t j = 0; j < k; ++j) {
    double largest = 0.0;
    for (std::size_t i = 0; i < rows.size(); ++i)
      if (rows.weight(i) > 0.0) largest = std::max(largest, std::abs(rows.feature(j, i)));
    if (largest > 0.0 && std::isfinite(largest) && (largest > 0x1p32 || largest < 0x1p-32))
      exponent[j] = std::ilogb(largest) + 1;
  }
  return exponent;
}

// The Newton iteration on `problem`, whose feature j was divided by
// 2^exponent[j].
template <class Rows>
LogisticFit solve(const Problem<Rows>& problem, int max_iterations, const std::vector<int>& exponent) {
  const std::size_t k = exponent.size();
  const auto d = static_cast<Eigen::Index>(problem.dim());
  Eigen::VectorXd beta = Eigen::VectorXd::Zero(d);
  const Eigen::VectorXd tolerance = problem.gradient_tolerance();

  LogisticFit fit;
  Evaluation ev = problem.evaluate(beta);
  for (int it = 0;; ++it) {
    // The ridge only keeps the solve defined when the Hessian is singular
    // (constant or collinear features, separated rows); it does not enter the
    // objective, so the fixed point is the unpenalised maximum likelihood.
    const double scale = ev.hessian.diagonal().cwiseAbs().maxCoeff();
    const double ridge = std::max(1e-12 * scale, std::numeric_limits<double>::min());
    Eigen::MatrixXd h = ev.hessian;
    h.diagonal().array() += ridge;
    const Eigen::VectorXd step = -h.ldlt().solve(ev.gradient);
    if (!step.allFinite()) break;

    // Converged only when the gradient is negligible AND the Newton step would
    // hardly move any fitted log-odds. On separated data the gradient decays
    // towards zero while the step stays of order one, so the second test is
    // what tells a finite optimum from a diverging one.
    const bool small_gradient = (ev.gradient.cwiseAbs().array() <= tolerance.array()).all();
    if (small_gradient && problem.max_eta_change(step) <= 1e-6) {
      fit.converged = true;
      break;
    }
    if (it >= max_iterations) break;

    // Backtracking (Armijo) line search, as in Lin, Lin and Weng (2007),
    // Algorithm 3: halve the step until the loss decreases enough.
    const double slope = ev.gradient.dot(step);
    double length = 1.0;
    bool accepted = false;
    Eigen::VectorXd candidate = beta + step;
    // Close to the optimum the predicted decrease is below the rounding of
    // the summed loss, so comparing losses says nothing; there the full
    // Newton step is taken (the quadratic model is accurate).
    if (-slope <= 1e-13 * ev.loss) accepted = true;
    while (!accepted && length >= 1e-12) {
      candidate = beta + length * step;
      const double trial = problem.loss(candidate);
      if (std::isfinite(trial) && trial <= ev.loss + 1e-4 * length * slope) {
        accepted = true;
        break;
      }
      length *= 0.5;
    }
    if (accepted && candidate == beta) accepted = false;  // the step vanished in rounding
    if (!accepted) {
      // No decrease is representable any more. That is a finite optimum
      // reached to rounding only if the remaining step is negligible.
      fit.converged = problem.max_eta_change(step) <= 1e-6;
      break;
    }
    beta = candidate;
    ++fit.iterations;
    ev = problem.evaluate(beta);
  }

  fit.coef.assign(beta.data(), beta.data() + beta.size());
  for (std::size_t j = 0; j < k; ++j) {
    fit.coef[j] = std::ldexp(fit.coef[j], -exponent[j]);
    if (!std::isfinite(fit.coef[j]))
      throw Error(ErrorKind::fit,
                  "the fitted slope is too large for a double: every score lies extremely close to 0", {},
                  {}, "scores rescaled to ordinary magnitudes");
  }
  fit.deviance = 2.0 * ev.loss;
  return fit;
}

bool any_scaled(const std::vector<int>& exponent) {
  return std::any_of(exponent.begin(), exponent.end(), [](int e) { return e != 0; });
}

}  // namespace

LogisticFit fit_logistic(std::span<const double> features, std::size_t k, std::span<const double> target,
                         std::span<const double> weight, bool intercept, int max_iterations) {
  const std::size_t n = target.size();
  if (features.size() != n * k || (!weight.empty() && weight.size() != n) || (k == 0 && !intercept))
    throw Error(ErrorKind::internal, "fit_logistic: inconsistent feature, target or weight sizes");
  const std::vector<int> exponent = scale_exponents(ColumnRows{features, target, weight, n}, k);
  std::vector<double> scaled;
  if (any_scaled(exponent)) {
    scaled.assign(features.begin(), features.end());
    for (std::size_t j = 0; j < k; ++j)
      for (std::size_t i = 0; i < n; ++i) scaled[j * n + i] = std::ldexp(scaled[j * n + i], -exponent[j]);
  }
  const Problem problem(ColumnRows{scaled.empty() ? features : std::span<const double>(scaled), target, weight, n},
                        k, intercept);
  return solve(problem, max_iterations, exponent);
}

LogisticFit fit_logistic_paired(std::span<const double> x, std::span<const double> positive,
                                std::span<const double> negative, int max_iterations) {
  if (positive.size() != x.size() || negative.size() != x.size())
    throw Error(ErrorKind::internal, "fit_logistic_paired: inconsistent value and weight sizes");
  const std::vector<int> exponent = scale_exponents(PairedRows{x, positive, negative}, 1);
  std::vector<double> scaled;
  if (any_scaled(exponent)) {
    scaled.assign(x.begin(), x.end());
    for (double& v : scaled) v = std::ldexp(v, -exponent[0]);
  }
  const Problem problem(PairedRows{scaled.empty() ? x : std::span<const double>(scaled), positive, negative}, 1, true);
  return solve(problem, max_iterations, exponent);
}

}  // namespace plumb
