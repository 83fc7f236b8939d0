// Property tests of the weighted logistic solver on seeded simulations.
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "plumb/error.hpp"
#include "plumb/logistic.hpp"
#include "plumb/scale.hpp"

namespace {

struct Simulated {
  std::vector<double> x;  // column-major n * k
  std::vector<double> y;
};

// y ~ Bernoulli(sigmoid(x . coef + intercept)), features standard normal.
Simulated simulate(std::size_t n, const std::vector<double>& coef, double intercept, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  std::uniform_real_distribution<double> unif(0.0, 1.0);
  const std::size_t k = coef.size();
  Simulated s;
  s.x.resize(n * k);
  s.y.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    double eta = intercept;
    for (std::size_t j = 0; j < k; ++j) {
      s.x[j * n + i] = normal(rng);
      eta += coef[j] * s.x[j * n + i];
    }
    s.y[i] = unif(rng) < plumb::sigmoid(eta) ? 1.0 : 0.0;
  }
  return s;
}

}  // namespace

TEST_CASE("logistic: recovers the coefficients of a simulated logistic model", "[logistic]") {
  const std::size_t n = 200000;
  const Simulated s = simulate(n, {1.5, -0.7}, 0.3, 11);
  const plumb::LogisticFit fit = plumb::fit_logistic(s.x, 2, s.y, {});
  REQUIRE(fit.converged);
  REQUIRE(fit.coef.size() == 3);
  // Standard errors are about 0.006-0.01 at this n; 0.05 is several of them.
  CHECK(fit.coef[0] == Approx(1.5).margin(0.05));
  CHECK(fit.coef[1] == Approx(-0.7).margin(0.05));
  CHECK(fit.coef[2] == Approx(0.3).margin(0.05));
  CHECK(fit.iterations < 20);
}

TEST_CASE("logistic: the fit satisfies the likelihood equations", "[logistic]") {
  // First-order optimality, computed here independently of the solver:
  // sum_i w_i x_ij (t_i - p_i) = 0 for every column and the intercept.
  const std::size_t n = 3000;
  Simulated s = simulate(n, {0.8, 2.0}, -1.0, 12);
  std::mt19937_64 rng(99);
  std::uniform_real_distribution<double> unif(0.0, 3.0);
  std::vector<double> w(n);
  for (double& v : w) v = unif(rng);
  const plumb::LogisticFit fit = plumb::fit_logistic(s.x, 2, s.y, w);
  REQUIRE(fit.converged);
  double g0 = 0, g1 = 0, g2 = 0, dev = 0;
  for (std::size_t i = 0; i < n; ++i) {
    const double eta = fit.coef[0] * s.x[i] + fit.coef[1] * s.x[n + i] + fit.coef[2];
    const double p = 1.0 / (1.0 + std::exp(-eta));
    const double r = w[i] * (s.y[i] - p);
    g0 += r * s.x[i];
    g1 += r * s.x[n + i];
    g2 += r;
    dev -= 2.0 * w[i] * (s.y[i] > 0.5 ? std::log(p) : std::log(1.0 - p));
  }
  CHECK(std::abs(g0) < 1e-7);
  CHECK(std::abs(g1) < 1e-7);
  CHECK(std::abs(g2) < 1e-7);
  CHECK(fit.deviance == Approx(dev).epsilon(1e-10));
}

TEST_CASE("logistic: intercept-only fit is the log-odds of the weighted mean", "[logistic]") {
  // Closed form of the intercept-only maximum-likelihood estimate.
  const std::vector<double> y{1, 0, 0, 1, 1, 0, 1, 1};
  const std::vector<double> w{0.5, 2.0, 1.0, 3.0, 0.25, 1.5, 1.0, 0.0};
  double pos = 0, tot = 0;
  for (std::size_t i = 0; i < y.size(); ++i) {
    pos += w[i] * y[i];
    tot += w[i];
  }
  const plumb::LogisticFit fit = plumb::fit_logistic({}, 0, y, w);
  REQUIRE(fit.converged);
  CHECK(fit.coef[0] == Approx(std::log(pos / (tot - pos))).margin(1e-12));
}

TEST_CASE("logistic: fractional targets are fitted like weighted 0/1 rows", "[logistic]") {
  // A target t with weight w has the same likelihood as a 1 with weight w t
  // plus a 0 with weight w (1 - t).
  const std::size_t n = 500;
  const Simulated s = simulate(n, {1.0}, 0.0, 13);
  std::vector<double> t(n);
  for (std::size_t i = 0; i < n; ++i) t[i] = s.y[i] > 0.5 ? 0.9 : 0.2;
  const plumb::LogisticFit frac = plumb::fit_logistic(s.x, 1, t, {});
  std::vector<double> x2(s.x), y2(n, 1.0), w2(t);
  x2.insert(x2.end(), s.x.begin(), s.x.end());
  y2.resize(2 * n, 0.0);
  for (std::size_t i = 0; i < n; ++i) w2.push_back(1.0 - t[i]);
  const plumb::LogisticFit split = plumb::fit_logistic(x2, 1, y2, w2);
  REQUIRE(frac.converged);
  REQUIRE(split.converged);
  CHECK(frac.coef[0] == Approx(split.coef[0]).margin(1e-9));
  CHECK(frac.coef[1] == Approx(split.coef[1]).margin(1e-9));
}

TEST_CASE("logistic: rows of zero weight do not change the fit", "[logistic]") {
  const std::size_t n = 1000;
  const Simulated s = simulate(n, {1.2}, -0.4, 14);
  const plumb::LogisticFit base = plumb::fit_logistic(s.x, 1, s.y, {});
  // Append extreme rows that would dominate the fit if they counted.
  std::vector<double> x(s.x), y(s.y), w(n, 1.0);
  for (int i = 0; i < 50; ++i) {
    x.push_back(100.0);
    y.push_back(0.0);
    w.push_back(0.0);
  }
  const plumb::LogisticFit padded = plumb::fit_logistic(x, 1, y, w);
  CHECK(padded.coef == base.coef);
  CHECK(padded.converged == base.converged);
}

TEST_CASE("logistic: separated data ends finite and unconverged", "[logistic]") {
  const std::vector<double> x{-3, -2, -1.5, -0.5, 0.4, 1, 2, 2.5};
  const std::vector<double> y{0, 0, 0, 0, 1, 1, 1, 1};
  for (int max_it : {10, 100}) {
    const plumb::LogisticFit fit = plumb::fit_logistic(x, 1, y, {}, true, max_it);
    CHECK_FALSE(fit.converged);
    CHECK(fit.iterations <= max_it);
    CHECK(std::isfinite(fit.coef[0]));
    CHECK(std::isfinite(fit.coef[1]));
    CHECK(fit.coef[0] > 0.0);  // moving towards the separating direction
  }
  // Quasi-complete separation: one tied row of each class at x = 0.
  const std::vector<double> xq{-2, -1, 0, 0, 1, 2};
  const std::vector<double> yq{0, 0, 0, 1, 1, 1};
  const plumb::LogisticFit q = plumb::fit_logistic(xq, 1, yq, {});
  CHECK_FALSE(q.converged);
  CHECK(std::isfinite(q.coef[0]));
}

TEST_CASE("logistic: inconsistent sizes are an internal error", "[logistic]") {
  const std::vector<double> x{1, 2, 3};
  const std::vector<double> y{0, 1};
  try {
    plumb::fit_logistic(x, 1, y, {});
    FAIL("expected plumb::Error");
  } catch (const plumb::Error& e) {
    CHECK(e.kind() == plumb::ErrorKind::internal);
  }
}

TEST_CASE("logistic: features near 1e300 or 1e-300 fit as their rescaled copies do", "[logistic]") {
  // eta = beta x: multiplying a feature by 2^k divides its coefficient by
  // 2^k and leaves the intercept and the likelihood as they were. Features
  // whose largest magnitude is in [1/2, 1) come back exactly from the
  // solver's own power-of-two rescaling, so the results agree to the bit.
  std::mt19937_64 rng(31);
  std::uniform_real_distribution<double> unif(0.0, 3.0);
  Simulated s = simulate(2000, {1.2}, -0.4, 14);
  double largest = 0.0;
  for (double v : s.x) largest = std::max(largest, std::abs(v));
  for (double& v : s.x) v = std::ldexp(v, -(std::ilogb(largest) + 1));
  std::vector<double> w(s.y.size());
  for (double& v : w) v = unif(rng);
  const plumb::LogisticFit base = plumb::fit_logistic(s.x, 1, s.y, w);
  REQUIRE(base.converged);
  for (int k : {1000, 40, -40, -990}) {
    INFO("features times 2^" << k);
    std::vector<double> x(s.x);
    for (double& v : x) v = std::ldexp(v, k);
    const plumb::LogisticFit fit = plumb::fit_logistic(x, 1, s.y, w);
    CHECK(fit.converged);
    CHECK(fit.iterations == base.iterations);
    CHECK(fit.coef[0] == std::ldexp(base.coef[0], -k));
    CHECK(fit.coef[1] == base.coef[1]);
    CHECK(fit.deviance == base.deviance);
  }
}

TEST_CASE("logistic: a slope too large for a double is a fit error", "[logistic]") {
  // Subnormal features: the slope that fits them is about 2^1070, beyond the
  // largest double (about 2^1024).
  const std::vector<double> x{-3, -2, -1, 1, 2, 3, -1, 1};
  const std::vector<double> y{0, 0, 1, 0, 1, 1, 0, 1};
  std::vector<double> tiny(x);
  for (double& v : tiny) v = std::ldexp(v, -1070);
  const plumb::LogisticFit ordinary = plumb::fit_logistic(x, 1, y, {});
  REQUIRE(ordinary.converged);
  REQUIRE(ordinary.coef[0] > 0.1);
  try {
    plumb::fit_logistic(tiny, 1, y, {});
    FAIL("no error");
  } catch (const plumb::Error& e) {
    CHECK(e.kind() == plumb::ErrorKind::fit);
    CHECK(std::string(e.what()).find("too large for a double") != std::string::npos);
  }
}

TEST_CASE("logistic: the paired form is the fit on its rows, bit for bit", "[logistic]") {
  // fit_logistic_paired(x, positive, negative) stands for the rows
  // (x_c, 1, positive_c), (x_c, 0, negative_c); rows of zero weight are
  // left out of the row form, as report's per-forecast sums leave them.
  // Also on features scaled by 2^-1000 and 2^1000, where both forms take
  // the solver's power-of-two rescaling.
  std::mt19937_64 rng(47);
  std::uniform_real_distribution<double> unif(0.0, 1.0);
  std::vector<double> x, positive, negative;
  for (int c = 0; c < 400; ++c) {
    const double v = -4.0 + 8.0 * unif(rng);
    x.push_back(v);
    const double p = plumb::sigmoid(0.7 * v - 0.3);
    const double n = std::floor(1.0 + 20.0 * unif(rng));
    positive.push_back(c % 7 == 0 ? 0.0 : std::floor(n * p + unif(rng)));
    negative.push_back(c % 11 == 0 ? 0.0 : n - std::floor(n * p) + 0.25 * unif(rng));
  }
  for (int k : {0, -1000, 1000}) {
    INFO("features times 2^" << k);
    std::vector<double> scaled(x), rx, ry, rw;
    for (double& v : scaled) v = std::ldexp(v, k);
    for (std::size_t c = 0; c < x.size(); ++c) {
      if (positive[c] > 0.0) {
        rx.push_back(scaled[c]);
        ry.push_back(1.0);
        rw.push_back(positive[c]);
      }
      if (negative[c] > 0.0) {
        rx.push_back(scaled[c]);
        ry.push_back(0.0);
        rw.push_back(negative[c]);
      }
    }
    const plumb::LogisticFit rows = plumb::fit_logistic(rx, 1, ry, rw);
    const plumb::LogisticFit paired = plumb::fit_logistic_paired(scaled, positive, negative);
    REQUIRE(rows.converged);
    CHECK(paired.converged);
    CHECK(paired.iterations == rows.iterations);
    CHECK(paired.coef == rows.coef);
    CHECK(paired.deviance == rows.deviance);
    // And the fit is the model's: the slope near 0.7 / 2^k.
    CHECK(std::abs(std::ldexp(paired.coef[0], k) - 0.7) < 0.2);
  }
  CHECK_THROWS_AS(plumb::fit_logistic_paired(x, positive, std::vector<double>(3, 1.0)), plumb::Error);
}
