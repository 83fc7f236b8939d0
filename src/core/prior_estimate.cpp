#include "plumb/prior_estimate.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <random>
#include <string>
#include <thread>
#include <vector>

#include "plumb/error.hpp"

namespace plumb {
namespace {

// The rows merged by probability: for each distinct value, u = p / a,
// v = (1 - p) / (1 - a) and its number of rows.
struct Cells {
  std::vector<double> u, v, count;
  double rows = 0.0;
};

Cells cells_of(std::span<const double> probability, double a) {
  std::vector<double> sorted(probability.begin(), probability.end());
  std::sort(sorted.begin(), sorted.end());
  Cells c;
  for (std::size_t i = 0; i < sorted.size();) {
    std::size_t j = i;
    while (j < sorted.size() && sorted[j] == sorted[i]) ++j;
    c.u.push_back(sorted[i] / a);
    c.v.push_back((1.0 - sorted[i]) / (1.0 - a));
    c.count.push_back(static_cast<double>(j - i));
    i = j;
  }
  c.rows = static_cast<double>(sorted.size());
  return c;
}

// One EM step: the mean over the rows of the posterior of the positive
// class when the base rate is b.
double em_step(const Cells& c, double b) noexcept {
  double sum = 0.0;
  for (std::size_t i = 0; i < c.u.size(); ++i) {
    const double pos = b * c.u[i], neg = (1.0 - b) * c.v[i];
    if (pos > 0.0) sum += c.count[i] * (pos / (pos + neg));
  }
  return sum / c.rows;
}

// The maximum over b in [0, 1] of sum w_i log(b u_i + (1 - b) v_i): the root
// of its derivative g(b) = sum w_i (u_i - v_i) / (b u_i + (1 - b) v_i),
// which falls strictly, by Newton's method kept inside a shrinking bracket
// (a step that leaves the bracket is replaced by bisection).
double likelihood_maximum(const Cells& c, const std::vector<double>& w, double start) noexcept {
  double lo = 0.0, hi = 1.0, b = std::clamp(start, 1e-12, 1.0 - 1e-12);
  for (int it = 0; it < 200 && hi - lo > 1e-13; ++it) {
    double g = 0.0, dg = 0.0;
    for (std::size_t i = 0; i < c.u.size(); ++i) {
      if (w[i] == 0.0) continue;
      const double d = c.u[i] - c.v[i], den = c.v[i] + b * d;
      const double r = d / den;
      g += w[i] * r;
      dg -= w[i] * r * r;
    }
    if (g > 0.0)
      lo = b;
    else if (g < 0.0)
      hi = b;
    else
      return b;
    double next = dg < 0.0 ? b - g / dg : 0.5 * (lo + hi);
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (std::fabs(next - b) < 1e-14) return next;
    b = next;
  }
  return 0.5 * (lo + hi);
}

std::uint64_t splitmix64(std::uint64_t x) noexcept {
  x += 0x9E3779B97F4A7C15ull;
  x = (x ^ (x >> 30)) * 0xBF58476D1CE4E5B9ull;
  x = (x ^ (x >> 27)) * 0x94D049BB133111EBull;
  return x ^ (x >> 31);
}

double uniform01(std::mt19937_64& gen) noexcept { return static_cast<double>(gen() >> 11) * 0x1p-53; }

// A Poisson count of mean n (the resampled number of n tied rows): by
// inversion of its distribution function up to n = 64; above, the normal
// law of the same mean and variance (Box-Muller), rounded and kept >= 0.
// Written out so that every standard library gives the same counts.
double poisson_count(std::mt19937_64& gen, double n) noexcept {
  // e^-n once per count, not once per cell and resample.
  static const std::array<double, 65> exp_minus = [] {
    std::array<double, 65> out{};
    for (std::size_t i = 0; i < out.size(); ++i) out[i] = std::exp(-static_cast<double>(i));
    return out;
  }();
  if (n <= 64.0) {
    const double u = uniform01(gen);
    double term = exp_minus[static_cast<std::size_t>(n)], cdf = term;
    double k = 0.0;
    while (u >= cdf && k < 512.0) {
      k += 1.0;
      term *= n / k;
      cdf += term;
    }
    return k;
  }
  const double u1 = 1.0 - uniform01(gen), u2 = uniform01(gen);
  const double z = std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * 3.141592653589793 * u2);
  return std::max(0.0, std::round(n + std::sqrt(n) * z));
}

// Hyndman and Fan (1996) type 7 quantile of sorted values.
double quantile7(const std::vector<double>& sorted, double q) noexcept {
  const double h = (static_cast<double>(sorted.size()) - 1.0) * q;
  const auto lo = static_cast<std::size_t>(std::floor(h));
  const std::size_t hi = std::min(lo + 1, sorted.size() - 1);
  return sorted[lo] + (h - static_cast<double>(lo)) * (sorted[hi] - sorted[lo]);
}

void check_rate(double a) {
  if (!(a > 0.0 && a < 1.0))
    throw Error(ErrorKind::usage, "the map's base rate lies outside (0, 1)", {}, std::to_string(a),
                "a map fitted on rows of both classes");
}

}  // namespace

double base_rate_log_likelihood(std::span<const double> probability, double a, double b) {
  check_rate(a);
  double sum = 0.0;
  for (double p : probability) sum += std::log(b * p / a + (1.0 - b) * (1.0 - p) / (1.0 - a));
  return sum;
}

PriorEstimate estimate_base_rate(std::span<const double> probability, double a, const PriorEstimateOptions& o) {
  check_rate(a);
  if (!(o.confidence > 0.0 && o.confidence < 1.0))
    throw Error(ErrorKind::usage, "the confidence level lies outside (0, 1)", {}, std::to_string(o.confidence),
                "a level such as 0.95");
  if (probability.empty())
    throw Error(ErrorKind::fit, "no rows to estimate the base rate from", {}, {}, "at least one row with a score");
  const Cells cells = cells_of(probability, a);
  // One value for every row: the likelihood is flat (at the map's own base
  // rate) or greatest at 0 or 1, and an estimate would claim what the rows
  // cannot tell.
  if (cells.u.size() == 1)
    throw Error(ErrorKind::fit, "the map gives every row the same probability, which says nothing about the base rate",
                {}, std::to_string(probability.front()), "rows whose probabilities under the map differ");

  PriorEstimate out;
  double b = a;
  bool converged = false;
  while (out.iterations < o.max_iterations) {
    const double next = em_step(cells, b);
    ++out.iterations;
    const double moved = std::fabs(next - b);
    b = next;
    if (moved <= o.tolerance) {
      converged = true;
      break;
    }
  }
  if (!converged)
    throw Error(ErrorKind::fit,
                "the EM estimate of the base rate did not converge in " + std::to_string(o.max_iterations) +
                    " steps",
                {}, std::to_string(b), "scores that separate the classes at least a little");
  if (!(b > 1e-9 && b < 1.0 - 1e-9))
    throw Error(ErrorKind::fit,
                b <= 1e-9 ? "the estimated base rate is 0 (the rows look like negatives only), which has no odds"
                          : "the estimated base rate is 1 (the rows look like positives only), which has no odds",
                {}, std::to_string(b), "rows of both classes, as the map tells them apart");
  out.base_rate = out.lo = out.hi = b;
  if (o.resamples == 0) return out;

  std::vector<double> estimates(o.resamples, std::numeric_limits<double>::quiet_NaN());
  const std::size_t threads =
      std::max<std::size_t>(1, std::min(o.resamples, o.threads ? o.threads : std::thread::hardware_concurrency()));
  auto work = [&](std::size_t first) {
    std::vector<double> w(cells.count.size());
    for (std::size_t r = first; r < o.resamples; r += threads) {
      std::mt19937_64 gen(splitmix64(o.seed + (static_cast<std::uint64_t>(r) + 1) * 0x9E3779B97F4A7C15ull));
      double total = 0.0;
      for (std::size_t i = 0; i < w.size(); ++i) total += (w[i] = poisson_count(gen, cells.count[i]));
      if (total > 0.0) estimates[r] = likelihood_maximum(cells, w, b);
    }
  };
  std::vector<std::thread> pool;
  for (std::size_t t = 1; t < threads; ++t) pool.emplace_back(work, t);
  work(0);
  for (std::thread& t : pool) t.join();

  std::vector<double> used;
  for (double e : estimates)
    if (std::isfinite(e)) used.push_back(e);
  out.resamples_used = used.size();
  if (!used.empty()) {
    std::sort(used.begin(), used.end());
    out.lo = quantile7(used, (1.0 - o.confidence) / 2.0);
    out.hi = quantile7(used, (1.0 + o.confidence) / 2.0);
  }
  return out;
}

}  // namespace plumb
