#pragma once
// Estimating a new base rate from unlabelled rows (Saerens, Latinne and
// Decaestecker 2002, "Adjusting the outputs of a classifier to new a priori
// probabilities: a simple procedure"; cited from memory): given a map's
// probabilities p_i for rows of a population whose base rate is unknown,
// and the base rate a those probabilities are calibrated for, EM alternates
//   p_i(b) = (b/a) p_i / ((b/a) p_i + ((1-b)/(1-a)) (1 - p_i))   (E step)
//   b      = mean of p_i(b)                                      (M step)
// from b = a. It climbs the likelihood
//   L(b) = sum_i log( b p_i / a + (1 - b) (1 - p_i) / (1 - a) ),
// which is concave in b, so its fixed point is the maximum likelihood
// estimate. The assumption is that only the base rate changed: the scores
// of each class are distributed as they were when the map was fitted.
#include <cstddef>
#include <cstdint>
#include <span>

namespace plumb {

struct PriorEstimateOptions {
  // EM stops when one step moves b by at most this much.
  double tolerance = 1e-10;
  int max_iterations = 100000;
  // Bootstrap resamples for the interval (0: no interval).
  std::size_t resamples = 300;
  double confidence = 0.95;
  std::uint64_t seed = 1;
  std::size_t threads = 0;  // 0: one per core; the result does not depend on it
};

struct PriorEstimate {
  double base_rate = 0.0;  // the EM estimate
  int iterations = 0;      // EM steps taken
  // Percentile interval of the bootstrap estimates (Hyndman and Fan 1996
  // type 7 quantiles); lo = hi = base_rate when resamples is 0.
  double lo = 0.0, hi = 0.0;
  std::size_t resamples_used = 0;
};

// The EM estimate of the base rate of the rows whose map probabilities are
// `probability` (each in [0, 1]), for a map calibrated for base rate
// `fitted_base_rate` in (0, 1), with a bootstrap percentile interval.
//
// The rows are merged by probability (a piecewise-constant map gives few
// distinct values). Each resample gives every distinct value a Poisson
// count of mean its number of rows (a Poisson bootstrap, as the report's):
// exact by inversion up to 64 rows; above that, unlike the report (which
// sums exact draws), the normal law of the same mean and variance, rounded:
// an approximation whose error is small beside the bootstrap's own for such
// counts. Its estimate is the maximum of the same
// likelihood, found by a safeguarded Newton iteration from the full
// estimate (EM's fixed point, reached in a few steps instead of many).
// Resample r draws from std::mt19937_64 seeded with
// splitmix64(seed + (r + 1) * 0x9E3779B97F4A7C15), so the interval depends
// only on (probabilities, options).
//
// Throws Error(fit) when there are no rows, when every row has the same
// probability (the likelihood is then flat or greatest at 0 or 1), when EM
// has not converged after max_iterations steps, and when the estimate comes
// within 1e-9 of 0 or 1 (no finite odds to shift to). Error(usage) for a fitted_base_rate outside (0, 1) or a confidence
// outside (0, 1).
PriorEstimate estimate_base_rate(std::span<const double> probability, double fitted_base_rate,
                                 const PriorEstimateOptions& options = {});

// The log-likelihood L(b) above, for checks. Preconditions as above, b in [0, 1].
double base_rate_log_likelihood(std::span<const double> probability, double fitted_base_rate, double b);

}  // namespace plumb
