#include "plumb/odds_adjustment.hpp"

#include <charconv>
#include <string>

#include "plumb/error.hpp"

namespace plumb {

double multiply_odds(double p, double k) noexcept {
  // (1 - p) falls and k p rises with p, and rounding keeps each operation
  // monotone, so the result never falls as p rises. p = 0: 1 / (1 + inf) = 0;
  // p = 1: 1 / (1 + 0) = 1.
  return 1.0 / (1.0 + (1.0 - p) / (k * p));
}

namespace {

bool strictly_inside_unit(double r) noexcept { return r > 0.0 && r < 1.0; }

std::string number_text(double v) {
  char buffer[32];
  const auto end = std::to_chars(buffer, buffer + sizeof buffer, v).ptr;
  return std::string(buffer, end);
}

}  // namespace

double prior_shift_factor(double from, double to) {
  if (!strictly_inside_unit(from))
    throw Error(ErrorKind::usage, "the base rate to shift from lies outside (0, 1)", {}, number_text(from),
                "a base rate strictly between 0 and 1");
  if (!strictly_inside_unit(to))
    throw Error(ErrorKind::usage, "the new base rate lies outside (0, 1)", {}, number_text(to),
                "a base rate strictly between 0 and 1");
  return (to * (1.0 - from)) / (from * (1.0 - to));
}

double shifted_base_rate(double rate, double k) noexcept { return multiply_odds(rate, k); }

OddsAdjustedMap::OddsAdjustedMap(std::unique_ptr<CalibrationMap> base, double factor)
    : base_(std::move(base)), factor_(factor) {
  diagnostics_ = base_->diagnostics();
}

Mapped OddsAdjustedMap::map(double score) const noexcept {
  Mapped m = base_->map(score);
  m.probability = multiply_odds(m.probability, factor_);
  return m;
}

}  // namespace plumb
