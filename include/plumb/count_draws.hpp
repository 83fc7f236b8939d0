#pragma once
// Exact random counts for the report's resampling (bootstrap.hpp): a
// Poisson(n) total for a cell of n tied rows (the law of the sum of their
// Poisson(1) bootstrap counts) and a Binomial(n, f) count of positives for
// the consistency band (the law of the sum of n Bernoulli(f) labels), each
// in one draw whatever n.
//
// Small n: inversion of the distribution function, summed term by term in
// a fixed order (written out, rather than <random>'s distributions, so that
// every standard library gives the same counts for the same seed).
// Large n: rejection methods of Hörmann (1993), exact in law:
//   - Poisson(n), n > 64: PTRS, "The transformed rejection method for
//     generating Poisson random variables", Insurance: Mathematics and
//     Economics 12, 39-45 (valid for means of 10 and more);
//   - Binomial(n, p) on the rarer outcome p <= 1/2, n > 64 and n p >= 10:
//     BTRS, "The generation of binomial random variates", Journal of
//     Statistical Computation and Simulation 46, 101-110; n p < 10 stays
//     with inversion (at most a few dozen steps, and (1 - p)^n >= e^-14
//     cannot underflow).
// The constants of both methods are the papers' as reproduced from memory
// (the same that NumPy and TensorFlow use, also from memory); the tests
// (tests/reference/test_count_draws_reference.cpp) hold the draws' laws to
// R's dpois and dbinom by chi-square goodness of fit.
//
// Every draw takes its uniforms from the caller's std::mt19937_64, one per
// inversion and two per rejection trial, so a sequence of draws depends only
// on the generator's seed.
#include <array>
#include <cstdint>
#include <memory>
#include <random>
#include <vector>

namespace plumb {

// A uniform in [0, 1) from the top 53 bits of one draw.
inline double uniform01(std::mt19937_64& gen) noexcept { return static_cast<double>(gen() >> 11) * 0x1p-53; }

namespace detail {

// cdf[n][k] = P(X <= k) for X ~ Poisson(n), n <= 64, summed term by term as
// inversion adds them (for n = 1 each term the last divided by k, k <= 40;
// beyond, the last times n * (1/k), k <= 512: past mean + 40 sd the
// remaining mass is below the spacing of the uniforms).
// guide[n][j] (2 <= n <= 64) is the first k with cdf[n][k] > j / 256: a
// uniform u with floor(256 u) = j has u >= cdf[n][k] for every k below it,
// so inversion may start its search there and finds the same k as from 0
// (in about one step rather than about n).
struct PoissonTables {
  static constexpr std::size_t guide_size = 256;
  std::array<std::vector<double>, 65> cdf;
  std::array<std::array<std::uint16_t, guide_size>, 65> guide{};
  PoissonTables();
};
const PoissonTables& poisson_tables();

// The first k >= `from` with u < cdf[k], at most `last`, given u >= cdf[k]
// below `from`.
inline std::uint64_t invert_from(const std::vector<double>& cdf, double u, std::size_t from,
                                 std::size_t last) noexcept {
  std::size_t k = from;
  while (k < last && u >= cdf[k]) ++k;
  return k;
}

// Poisson(1) from its table: the k with u >= cdf[k] are a prefix, and the
// first eight are counted without branches (u lies beyond cdf[7] about once
// in 10^5 draws).
inline std::uint64_t invert_poisson1(const std::vector<double>& cdf, double u) noexcept {
  std::uint64_t k = 0;
  for (std::size_t j = 0; j < 8; ++j) k += u >= cdf[j] ? 1 : 0;
  if (k == 8) return invert_from(cdf, u, 8, 40);
  return k;
}

// Poisson(n) for 1 <= n <= 64 by inversion of its table (t = poisson_tables()).
inline std::uint64_t draw_poisson_small(std::mt19937_64& gen, std::uint64_t n, const PoissonTables& t) noexcept {
  const double u = uniform01(gen);
  if (n == 1) return invert_poisson1(t.cdf[1], u);
  return invert_from(t.cdf[n], u, t.guide[n][static_cast<std::size_t>(u * PoissonTables::guide_size)], 512);
}

}  // namespace detail

// Poisson(n) for a whole number n >= 0 (the bootstrap's cell of n rows).
// Built once per cell; draw() is const and may run on several threads at
// once, each with its own generator.
class PoissonCount {
 public:
  static constexpr std::uint64_t inversion_limit = 64;  // n <= 64: inversion
  explicit PoissonCount(std::uint64_t n);
  std::uint64_t draw(std::mt19937_64& gen) const noexcept {
    if (n_ == 0) return 0;
    if (n_ <= inversion_limit) return detail::draw_poisson_small(gen, n_, detail::poisson_tables());
    return draw_ptrs(gen);
  }
  std::uint64_t n() const noexcept { return n_; }

 private:
  std::uint64_t draw_ptrs(std::mt19937_64& gen) const noexcept;
  std::uint64_t n_;
  // PTRS's constants for mean n.
  double lambda_ = 0, a_ = 0, b_ = 0, log_inv_alpha_ = 0, vr_ = 0;
};

// Binomial(n, f): how many of n rows of forecast f in [0, 1] draw a positive
// label. The rarer outcome (f or 1 - f) is drawn and flipped back.
class BinomialCount {
 public:
  static constexpr std::uint64_t inversion_limit = 64;  // n <= 64: inversion
  static constexpr double rejection_mean = 10.0;        // else inversion below n p = 10
  BinomialCount(std::uint64_t n, double f);
  std::uint64_t draw(std::mt19937_64& gen) const noexcept;
  std::uint64_t n() const noexcept { return n_; }
  double forecast() const noexcept { return f_; }

 private:
  enum class Method : std::uint8_t { bernoulli, none, all, inversion, btrs };
  struct Btrs {  // BTRS's constants (kept apart: few cells need them)
    double a, b, c, alpha, vr, r, m;
  };
  std::uint64_t draw_inversion(double u) const noexcept;
  std::uint64_t draw_btrs(std::mt19937_64& gen) const noexcept;
  std::uint64_t n_;
  double f_;
  double start_ = 0, ratio_ = 0;  // inversion: (1 - p)^n and p / (1 - p), p the rarer outcome's chance
  std::unique_ptr<const Btrs> btrs_;
  bool flip_;
  Method method_;
};

}  // namespace plumb
