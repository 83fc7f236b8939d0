#pragma once
// Adjusting a map's probabilities by a factor on the odds: the correction for
// a prior shift (the base rate moved from a to b since the fit; Bayes' rule,
// Saerens, Latinne and Decaestecker 2002) and for negative
// downsampling (the fit rows kept each negative with probability r; the
// odds of the full population are those of the sample times r: Elkan 2001;
// Dal Pozzolo et al. 2015; both cited from memory). Both leave the map's shape
// alone and multiply p / (1 - p) by one constant k > 0, which on the log-odds
// is a shift by ln k.
#include <memory>
#include <nlohmann/json.hpp>
#include <string_view>

#include "plumb/calibration_map.hpp"

namespace plumb {

// p with its odds multiplied by k: k p / (k p + 1 - p), evaluated as
// 1 / (1 + (1 - p) / (k p)), which keeps 0 at 0 and 1 at 1 exactly and is
// non-decreasing in p in floating point (every operation in it is
// monotone under rounding): an adjusted map falls only where the fitted
// map falls (for the logistic kinds, by an ulp of rounding, which the
// odds factor's slope near 0 and 1 can widen to several).
// Relative error a few ulps away from 0 and 1; a k p below the smallest
// double gives 0. Preconditions: p in [0, 1], k finite and > 0.
double multiply_odds(double p, double k) noexcept;

// The odds factor that moves base rate `from` to base rate `to`:
// [to / (1 - to)] / [from / (1 - from)], computed as
// (to (1 - from)) / (from (1 - to)). Throws Error(usage) unless both lie
// strictly inside (0, 1) (a base rate of 0 or 1 has no finite odds).
double prior_shift_factor(double from, double to);

// The base rate whose odds are those of `rate` times k: k r / (k r + 1 - r).
// Precondition: rate in (0, 1), k > 0.
double shifted_base_rate(double rate, double k) noexcept;

// A fitted map whose probabilities have their odds multiplied by `factor`.
// Everything but the probability (kind, scale, parameters, the
// outside-range and clipping flags, diagnostics) is the wrapped map's: an
// artifact stores the fitted map's parameters and the adjustment beside
// them (docs/artifact-format.md).
class OddsAdjustedMap final : public CalibrationMap {
 public:
  // Precondition: base not null, factor finite and > 0.
  OddsAdjustedMap(std::unique_ptr<CalibrationMap> base, double factor);

  std::string_view kind() const noexcept override { return base_->kind(); }
  Scale scale() const noexcept override { return base_->scale(); }
  Mapped map(double score) const noexcept override;
  nlohmann::json parameters() const override { return base_->parameters(); }
  bool monotone() const noexcept override { return base_->monotone(); }
  bool decreases_overall() const noexcept override { return base_->decreases_overall(); }
  bool reaches_zero_or_one() const noexcept override { return base_->reaches_zero_or_one(); }
  bool has_interval() const noexcept override { return base_->has_interval(); }
  // The wrapped map's interval with each end's odds multiplied: a monotone
  // change, so an interval holding the probability still holds it.
  std::array<double, 2> interval(double score) const noexcept override {
    const std::array<double, 2> i = base_->interval(score);
    return {multiply_odds(i[0], factor_), multiply_odds(i[1], factor_)};
  }

  double factor() const noexcept { return factor_; }
  const CalibrationMap& base() const noexcept { return *base_; }
  // Hands the wrapped map back (the wrapper is then empty and must not be used).
  std::unique_ptr<CalibrationMap> release_base() noexcept { return std::move(base_); }

 private:
  std::unique_ptr<CalibrationMap> base_;
  double factor_;
};

}  // namespace plumb
