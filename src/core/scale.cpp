#include "plumb/scale.hpp"

#include <cmath>

namespace plumb {

std::string_view to_string(Scale s) noexcept {
  switch (s) {
    case Scale::probability: return "probability";
    case Scale::logit: return "logit";
    case Scale::margin: return "margin";
  }
  return "probability";
}

std::optional<Scale> parse_scale(std::string_view text) noexcept {
  if (text == "probability") return Scale::probability;
  if (text == "logit") return Scale::logit;
  if (text == "margin") return Scale::margin;
  return std::nullopt;
}

bool valid_on_scale(double score, Scale scale) noexcept {
  if (!std::isfinite(score)) return false;
  if (scale == Scale::probability) return score >= 0.0 && score <= 1.0;
  return true;
}

double clipped_logit(double p, bool* clipped) noexcept {
  double q = p;
  if (q < probability_clip) q = probability_clip;
  if (q > 1.0 - probability_clip) q = 1.0 - probability_clip;
  if (clipped) *clipped = (q != p);
  // log(q) - log1p(-q) keeps precision near both ends.
  return std::log(q) - std::log1p(-q);
}

}  // namespace plumb
