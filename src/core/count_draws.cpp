#include "plumb/count_draws.hpp"

#include <cmath>

namespace plumb {
namespace detail {

PoissonTables::PoissonTables() {
  constexpr std::size_t steps = 512;
  std::array<double, steps + 1> reciprocal{};
  for (std::size_t k = 1; k <= steps; ++k) reciprocal[k] = 1.0 / static_cast<double>(k);
  {
    double term = std::exp(-1.0), sum = term;
    cdf[1].push_back(sum);
    for (unsigned k = 1; k <= 40; ++k) {
      term /= k;
      sum += term;
      cdf[1].push_back(sum);
    }
  }
  for (std::uint64_t n = 2; n <= 64; ++n) {
    const double lambda = static_cast<double>(n);
    double term = std::exp(-static_cast<double>(n)), sum = term;
    cdf[n].push_back(sum);
    for (std::size_t k = 1; k <= steps; ++k) {
      term *= lambda * reciprocal[k];
      sum += term;
      cdf[n].push_back(sum);
    }
    std::size_t k = 0;
    for (std::size_t j = 0; j < guide_size; ++j) {
      const double floor_u = static_cast<double>(j) / static_cast<double>(guide_size);
      while (k < steps && !(cdf[n][k] > floor_u)) ++k;
      guide[n][j] = static_cast<std::uint16_t>(k);
    }
  }
}

const PoissonTables& poisson_tables() {
  static const PoissonTables t;
  return t;
}

}  // namespace detail

namespace {

constexpr double half_log_2pi = 0.91893853320467274178;  // log(2 pi) / 2

// Stirling's remainder for k!: fc(k) = log(k!) - [(k + 1/2) log(k + 1) -
// (k + 1) + log(2 pi) / 2], a small positive number. Below 1024 from a
// table of std::lgamma (made once, on first use, so that no thread calls
// lgamma, which sets a global); beyond, Stirling's series for log Gamma(x),
// x = k + 1, to its x^-5 term (the next, 1/(1680 x^7), is below 10^-23).
// The rejection tests take log f(k) in this form so that the large terms
// cancel by algebra rather than in rounding.
double stirling_tail(double k) noexcept {
  constexpr std::size_t table_size = 1024;
  static const std::array<double, table_size> table = [] {
    std::array<double, table_size> t{};
    for (std::size_t i = 0; i < table_size; ++i) {
      const double x = static_cast<double>(i) + 1.0;
      t[i] = std::lgamma(x) - ((x - 0.5) * std::log(x) - x + half_log_2pi);
    }
    return t;
  }();
  if (k < static_cast<double>(table_size)) return table[static_cast<std::size_t>(k)];
  const double x = k + 1.0, x2 = x * x;
  return (1.0 / 12.0 - (1.0 / 360.0 - 1.0 / (1260.0 * x2)) / x2) / x;
}

// (n - k) / (k + 1) for n <= 64, k < n: the quotients the binomial
// inversion's steps multiply by, divided once rather than at every step.
const std::array<std::array<double, 64>, 65>& binomial_quotients() noexcept {
  static const auto table = [] {
    std::array<std::array<double, 64>, 65> q{};
    for (std::uint64_t n = 0; n <= 64; ++n)
      for (std::uint64_t k = 0; k < n; ++k) q[n][k] = static_cast<double>(n - k) / static_cast<double>(k + 1);
    return q;
  }();
  return table;
}

}  // namespace

PoissonCount::PoissonCount(std::uint64_t n) : n_(n) {
  if (n >= 1 && n <= inversion_limit) detail::poisson_tables();  // made before any thread draws
  if (n > inversion_limit) {
    // PTRS (Hörmann 1993, from memory): the hat's constants for mean lambda.
    lambda_ = static_cast<double>(n);
    const double root = std::sqrt(lambda_);
    b_ = 0.931 + 2.53 * root;
    a_ = -0.059 + 0.02483 * b_;
    log_inv_alpha_ = std::log(1.1239 + 1.1328 / (b_ - 3.4));
    vr_ = 0.9277 - 3.6224 / (b_ - 2.0);
    stirling_tail(0.0);  // its table made before any thread draws
  }
}

std::uint64_t PoissonCount::draw_ptrs(std::mt19937_64& gen) const noexcept {
  for (;;) {
    const double u = uniform01(gen) - 0.5;
    const double v = uniform01(gen);
    const double us = 0.5 - std::abs(u);
    // u = -1/2 gives us = 0 and k = -inf: rejected below.
    const double k = std::floor((2.0 * a_ / us + b_) * u + lambda_ + 0.43);
    if (us >= 0.07 && v <= vr_) return static_cast<std::uint64_t>(k);  // the squeeze: k >= 0 there
    if (k < 0.0 || (us < 0.013 && v > us)) continue;
    // log P(X = k) = -lambda + k log lambda - log k!, with log k! in
    // Stirling's form: (k + 1 - lambda) + k log(lambda / (k + 1))
    // - log(k + 1) / 2 - log(2 pi) / 2 - fc(k).
    const double log_pk = (k + 1.0 - lambda_) + k * std::log1p((lambda_ - k - 1.0) / (k + 1.0)) -
                          0.5 * std::log(k + 1.0) - half_log_2pi - stirling_tail(k);
    if (std::log(v) + log_inv_alpha_ - std::log(a_ / (us * us) + b_) <= log_pk) return static_cast<std::uint64_t>(k);
  }
}

BinomialCount::BinomialCount(std::uint64_t n, double f) : n_(n), f_(f), flip_(f > 0.5) {
  if (n == 1) {
    method_ = Method::bernoulli;
    return;
  }
  if (n == 0 || !(f > 0.0)) {
    method_ = Method::none;
    return;
  }
  if (!(f < 1.0)) {
    method_ = Method::all;
    return;
  }
  const double p = flip_ ? 1.0 - f : f;
  const double N = static_cast<double>(n);
  if (n <= inversion_limit || N * p < rejection_mean) {
    method_ = Method::inversion;
    start_ = std::pow(1.0 - p, N);
    ratio_ = p / (1.0 - p);
    if (n <= inversion_limit) binomial_quotients();  // made before any thread draws
    return;
  }
  // BTRS (Hörmann 1993, from memory): the hat's constants for n, p <= 1/2.
  method_ = Method::btrs;
  const double q = 1.0 - p;
  const double spq = std::sqrt(N * p * q);
  Btrs t{};
  t.b = 1.15 + 2.53 * spq;
  t.a = -0.0873 + 0.0248 * t.b + 0.01 * p;
  t.c = N * p + 0.5;
  t.alpha = (2.83 + 5.1 / t.b) * spq;
  t.vr = 0.92 - 4.2 / t.b;
  t.r = p / q;
  t.m = std::floor((N + 1.0) * p);  // the mode
  stirling_tail(0.0);  // its table made before any thread draws
  btrs_ = std::make_unique<const Btrs>(t);
}

std::uint64_t BinomialCount::draw(std::mt19937_64& gen) const noexcept {
  switch (method_) {
    case Method::bernoulli: return uniform01(gen) < f_ ? 1 : 0;
    case Method::none: return 0;
    case Method::all: return n_;
    case Method::inversion: {
      const std::uint64_t k = draw_inversion(uniform01(gen));
      return flip_ ? n_ - k : k;
    }
    case Method::btrs: {
      const std::uint64_t k = draw_btrs(gen);
      return flip_ ? n_ - k : k;
    }
  }
  return 0;
}

std::uint64_t BinomialCount::draw_inversion(double u) const noexcept {
  double term = start_, cdf = term;
  std::uint64_t k = 0;
  if (n_ <= inversion_limit) {
    const double* q = binomial_quotients()[n_].data();
    while (u >= cdf && k < n_) {
      term *= q[k] * ratio_;
      ++k;
      cdf += term;
    }
    return k;
  }
  // Here n p < 10: the terms past the mean fall to zero long before n, and a
  // u beyond the rounded sum of them all (a chance near 2^-53) stops there.
  while (u >= cdf && k < n_) {
    term *= static_cast<double>(n_ - k) / static_cast<double>(k + 1) * ratio_;
    if (!(term > 0.0)) break;
    ++k;
    cdf += term;
  }
  return k;
}

std::uint64_t BinomialCount::draw_btrs(std::mt19937_64& gen) const noexcept {
  const double N = static_cast<double>(n_);
  const double a_ = btrs_->a, b_ = btrs_->b, c_ = btrs_->c, alpha_ = btrs_->alpha, vr_ = btrs_->vr, r_ = btrs_->r,
               m_ = btrs_->m;
  for (;;) {
    const double u = uniform01(gen) - 0.5;
    const double v = uniform01(gen);
    const double us = 0.5 - std::abs(u);
    const double k = std::floor((2.0 * a_ / us + b_) * u + c_);
    if (k < 0.0 || k > N) continue;  // also u = -1/2 (us = 0, k = -inf)
    if (us >= 0.07 && v <= vr_) return static_cast<std::uint64_t>(k);
    // Accept when v alpha / (a / us^2 + b) <= f(k) / f(m), in logs.
    // log f(k) / f(m) = log[m! (n - m)! / (k! (n - k)!)] + (k - m) log r,
    // the factorials in Stirling's form (the linear terms cancel).
    const double m = m_;
    const double log_ratio = (m + 0.5) * std::log((m + 1.0) / (r_ * (N - m + 1.0))) +
                             (N + 1.0) * std::log1p((k - m) / (N - k + 1.0)) +
                             (k + 0.5) * std::log(r_ * (N - k + 1.0) / (k + 1.0)) + stirling_tail(m) +
                             stirling_tail(N - m) - stirling_tail(k) - stirling_tail(N - k);
    if (std::log(v * alpha_ / (a_ / (us * us) + b_)) <= log_ratio) return static_cast<std::uint64_t>(k);
  }
}

}  // namespace plumb
