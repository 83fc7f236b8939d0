#pragma once
// Proper scoring rules for binary outcomes: Brier (1950) score and log loss.
#include <span>

namespace plumb {

// Common contract of the metric functions (scores.hpp, murphy.hpp, corp.hpp,
// calibration_error.hpp, goodness_of_fit.hpp, calibration_regression.hpp,
// auc.hpp, reliability.hpp, bootstrap.hpp):
//   forecast: probabilities in [0, 1];
//   label:    outcomes, 1 for the positive class and 0 otherwise;
//   weight:   empty (every row weighs 1) or one finite weight >= 0 per row,
//             read as a frequency weight (a row of weight 2 counts as two rows).
// All spans have equal length (else plumb::Error(internal)); a total weight
// of 0 gives plumb::Error(fit). Means are weighted means: sum(w * x) / sum(w).

// Weighted mean of (p - y)^2; in [0, 1], lower is better (Brier 1950).
double brier_score(std::span<const double> forecast, std::span<const double> label,
                   std::span<const double> weight = {});

// Weighted mean of -(y ln p + (1 - y) ln(1 - p)) in nats, with p clipped into
// [probability_clip, 1 - probability_clip] (scale.hpp) so a confident miss
// costs about 27.6 nats instead of infinity.
double log_loss(std::span<const double> forecast, std::span<const double> label,
                std::span<const double> weight = {});

// The log loss of one row, with the same clipping (exposed so that other
// metrics score with exactly the same rule).
double log_loss_term(double forecast, double label) noexcept;

}  // namespace plumb
