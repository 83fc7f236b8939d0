#pragma once
// Weighted logistic regression with a handful of features, by Newton's
// method with backtracking line search (the safeguarded Newton iteration of
// Lin, Lin and Weng 2007, generalised to several features). Used by the
// Platt and beta maps and by the report's calibration slope and intercept.
#include <cstddef>
#include <span>
#include <vector>

namespace plumb {

struct LogisticFit {
  std::vector<double> coef;  // one per feature column, then the intercept (if fitted)
  int iterations = 0;
  bool converged = false;
  double deviance = 0.0;     // -2 * weighted log-likelihood at coef
};

// Fit P(target = 1) = sigmoid(X coef [+ intercept]).
//
// `features`: column-major, `features.size() == n * k` with feature j of row
// i at features[j * n + i]. `target`: n values in [0, 1] (0/1 labels or
// smoothed targets). `weight`: empty (all 1) or n finite values >= 0.
// Rows of zero weight take no part. Converged means: every gradient
// component is at most 1e-10 times sum(w |x_j|) (the total weight for the
// intercept) and the next Newton step would change no fitted log-odds by more
// than 1e-6. At most `max_iterations` Newton steps are taken; a separated
// data set (no finite maximum) ends with converged == false and finite
// coefficients, because every step is a finite, line-searched Newton step.
// A feature column whose largest magnitude lies outside [2^-32, 2^32] (margins
// near 1e300 or 1e-300) is scaled by a power of two before the iteration and
// its coefficient scaled back after, exactly, so that x^2 in the Hessian
// neither overflows nor underflows; other columns are used as given.
// Throws plumb::Error(internal) on inconsistent sizes, and plumb::Error(fit)
// when a coefficient scaled back is too large for a double (features all
// within about 1e-300 of 0 with a steep fit).
LogisticFit fit_logistic(std::span<const double> features, std::size_t k,
                         std::span<const double> target, std::span<const double> weight,
                         bool intercept = true, int max_iterations = 100);

// fit_logistic with one feature and an intercept, given per distinct value:
// value c stands for the rows (x[c], target 1, weight positive[c]) and
// (x[c], target 0, weight negative[c]), in that order, value after value.
// The fit is fit_logistic's on those rows, bit for bit (rows of zero weight
// take no part in either), without the rows being stored: memory is the
// three spans given, not six arrays of rows and a cache of their terms.
LogisticFit fit_logistic_paired(std::span<const double> x, std::span<const double> positive,
                                std::span<const double> negative, int max_iterations = 100);

}  // namespace plumb
