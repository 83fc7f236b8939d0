#pragma once
// What a raw score is, and the conversions between probability and log-odds.
#include <cmath>
#include <optional>
#include <string_view>

namespace plumb {

// probability: a number in [0, 1].
// logit:       log-odds, any finite real; probability = 1 / (1 + exp(-score)).
// margin:      any finite real with no probabilistic reading (an SVM margin,
//              a ranking score); only maps that learn their own link accept it.
enum class Scale { probability, logit, margin };

std::string_view to_string(Scale s) noexcept;
std::optional<Scale> parse_scale(std::string_view text) noexcept;

// Probabilities closer than this to 0 or 1 are moved to the bound before a
// logarithm or log-odds is taken, so that 0 and 1 give large finite values
// (about +-27.6 in log-odds) instead of infinities. Each such move is
// counted and reported ("clipped").
inline constexpr double probability_clip = 1e-12;

// True when `score` is an admissible value on `scale` (finite, and within
// [0, 1] for probabilities).
bool valid_on_scale(double score, Scale scale) noexcept;

// Log-odds of p after clipping p into [probability_clip, 1 - probability_clip].
// `clipped` (if given) is set to whether the clip changed p.
double clipped_logit(double p, bool* clipped = nullptr) noexcept;

// The logistic function, accurate for large |x| (no overflow, no 0/0).
inline double sigmoid(double x) noexcept {
  if (x >= 0) return 1.0 / (1.0 + std::exp(-x));
  const double e = std::exp(x);
  return e / (1.0 + e);
}

}  // namespace plumb
