#include "plumb/maps/centered_isotonic_map.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>

#include "core/json_fields.hpp"
#include "plumb/error.hpp"
#include "plumb/pav.hpp"

namespace plumb {

namespace {
// a + t (b - a) without overflow of b - a near the ends of the double range.
double between(double a, double b, double t) {
  const double gap = b - a;
  return std::isfinite(gap) ? a + t * gap : a + 2.0 * (t * (0.5 * b - 0.5 * a));
}
// (s - a) / (b - a) for a <= s <= b, a < b, without overflow.
double fraction(double s, double a, double b) {
  const double gap = b - a;
  return std::isfinite(gap) ? (s - a) / gap : (0.5 * s - 0.5 * a) / (0.5 * b - 0.5 * a);
}
}  // namespace

CenteredIsotonicMap::CenteredIsotonicMap(Scale scale, std::vector<double> point_score, std::vector<double> point_value,
                                         std::vector<double> point_weight, double fitted_lo, double fitted_hi,
                                         double tilt)
    : scale_(scale),
      x_(std::move(point_score)),
      y_(std::move(point_value)),
      w_(std::move(point_weight)),
      lo_(fitted_lo),
      hi_(fitted_hi),
      tilt_(tilt) {
  middle_ = 0.5 * lo_ + 0.5 * hi_;
  // A guide for the search, as the isotonic map's: [x_.front(), x_.back()]
  // cut into equal buckets, each holding the last point at or before the
  // bucket's start.
  if (x_.size() >= 16 && x_.size() <= std::numeric_limits<std::uint32_t>::max()) {
    const double width = x_.back() - x_.front();
    const std::size_t buckets = std::min<std::size_t>(4 * x_.size(), std::size_t{1} << 16);
    if (std::isfinite(width) && width > 0.0) {
      guide_origin_ = x_.front();
      guide_scale_ = static_cast<double>(buckets) / width;
      if (std::isfinite(guide_scale_)) {
        guide_.resize(buckets);
        for (std::size_t b = 0; b < buckets; ++b) {
          const double start = guide_origin_ + static_cast<double>(b) / guide_scale_;
          const auto after = std::upper_bound(x_.begin(), x_.end(), start);
          guide_[b] = static_cast<std::uint32_t>(after == x_.begin() ? 0 : after - x_.begin() - 1);
        }
      }
    }
  }
  const double half = 0.5 * hi_ - 0.5 * lo_;
  half_width_ = half > 0.0 ? half : 1.0;
}

double CenteredIsotonicMap::line(double score) const noexcept {
  if (!(score > x_.front())) return y_.front();
  if (!(score < x_.back())) return y_.back();
  // The last point at or below the score; it has a point above it. A binary
  // search whose step is a conditional move, not a branch: scores arrive in
  // no order, so a branch would be mispredicted half the time.
  std::size_t j = 0;
  if (!guide_.empty()) {
    // The guide's bucket, then a few steps to the exact point: down when
    // rounding put the score one bucket high, up through the points that
    // lie inside the bucket. The answer does not depend on the guide.
    const double at = (score - guide_origin_) * guide_scale_;
    const std::size_t b = at < static_cast<double>(guide_.size()) ? static_cast<std::size_t>(at) : guide_.size() - 1;
    j = guide_[b];
    while (j > 0 && x_[j] > score) --j;
    for (int steps = 0; j + 1 < x_.size() && x_[j + 1] <= score; ++j)
      if (++steps == 8) break;
  }
  const double* base = x_.data() + j;
  if (!(j + 1 == x_.size() || x_[j + 1] > score))
    for (std::size_t n = x_.size() - j; n > 1;) {
      const std::size_t half = n / 2;
      base = base[half] <= score ? base + half : base;
      n -= half;
    }
  const std::size_t i = static_cast<std::size_t>(base - x_.data());
  const double p = between(y_[i], y_[i + 1], fraction(score, x_[i], x_[i + 1]));
  return std::clamp(p, y_[i], y_[i + 1]);
}

Mapped CenteredIsotonicMap::map(double score) const noexcept {
  double p = line(score);
  if (tilt_ > 0.0) {
    const double t = 0.5 + 0.5 * std::tanh((0.5 * score - 0.5 * middle_) / (0.5 * half_width_));
    p = std::clamp((1.0 - tilt_) * p + tilt_ * t, 0.0, 1.0);
  }
  return {p, score < lo_ || score > hi_, false};
}

bool CenteredIsotonicMap::reaches_zero_or_one() const noexcept {
  return tilt_ == 0.0 && (y_.front() == 0.0 || y_.back() == 1.0);
}

std::unique_ptr<CalibrationMap> CenteredIsotonicMap::fit(const FitData& data, const MapOptions& options) {
  std::vector<PavBlock> blocks = pav_fit(data.score, data.label, data.weight);
  if (blocks.empty()) throw Error(ErrorKind::fit, "no rows of positive weight to fit");
  // Adjacent blocks of one value are one flat stretch: one point.
  std::vector<PavBlock> pooled;
  for (const PavBlock& b : blocks) {
    if (!pooled.empty() && pooled.back().value == b.value) {
      pooled.back().score_hi = b.score_hi;
      pooled.back().weight += b.weight;
    } else {
      pooled.push_back(b);
    }
  }
  // Each block's weighted mean score, as a running mean (no sum of w s that
  // could overflow on margin scores).
  std::vector<double> lo(pooled.size()), mean(pooled.size()), seen(pooled.size(), 0.0);
  for (std::size_t i = 0; i < pooled.size(); ++i) lo[i] = pooled[i].score_lo;
  for (std::size_t r = 0; r < data.score.size(); ++r) {
    const double w = data.weight.empty() ? 1.0 : data.weight[r];
    if (!(w > 0.0)) continue;
    const double s = data.score[r];
    const auto at = std::upper_bound(lo.begin(), lo.end(), s);
    if (at == lo.begin()) continue;
    const std::size_t i = static_cast<std::size_t>(at - lo.begin()) - 1;
    if (s > pooled[i].score_hi) continue;
    seen[i] += w;
    mean[i] = seen[i] == w ? s : between(mean[i], s, w / seen[i]);
  }
  std::vector<double> x, y, wt;
  for (std::size_t i = 0; i < pooled.size(); ++i) {
    x.push_back(std::clamp(mean[i], pooled[i].score_lo, pooled[i].score_hi));
    y.push_back(pooled[i].value);
    wt.push_back(pooled[i].weight);
  }
  auto map = std::make_unique<CenteredIsotonicMap>(data.scale, std::move(x), std::move(y), std::move(wt),
                                                   pooled.front().score_lo, pooled.back().score_hi,
                                                   options.centered_strict ? centered_isotonic_tilt : 0.0);
  map->diagnostics_.iterations = 1;
  map->diagnostics_.converged = true;
  if (options.row_diagnostics) map->diagnostics_.log_loss = mean_log_loss(*map, data);
  map->diagnostics_.notes.push_back(std::to_string(map->x_.size()) + " points");
  return map;
}

nlohmann::json CenteredIsotonicMap::parameters() const {
  return {{"increase", tilt_ > 0.0 ? "strict" : "weak"},
          {"tilt", tilt_},
          {"fitted_score_lo", lo_},
          {"fitted_score_hi", hi_},
          {"point_score", x_},
          {"point_value", y_},
          {"point_weight", w_}};
}

std::unique_ptr<CalibrationMap> CenteredIsotonicMap::from_parameters(Scale scale, const nlohmann::json& p,
                                                                     const std::string& where) {
  namespace jf = json_fields;
  const std::string increase = jf::require_string(p, "increase", where, "parameters.increase");
  if (increase != "weak" && increase != "strict")
    jf::fail(where, "parameters.increase", "is '" + increase + "'", "'weak' or 'strict'");
  const double tilt = jf::require_finite(p, "tilt", where, "parameters.tilt");
  if (increase == "weak" && tilt != 0.0) jf::fail(where, "parameters.tilt", "is not 0 for a weak increase", "0");
  if (increase == "strict" && !(tilt > 0.0 && tilt < 1.0))
    jf::fail(where, "parameters.tilt", "lies outside (0, 1) for a strict increase", "a small positive weight");
  const double lo = jf::require_finite(p, "fitted_score_lo", where, "parameters.fitted_score_lo");
  const double hi = jf::require_finite(p, "fitted_score_hi", where, "parameters.fitted_score_hi");
  if (!(lo <= hi)) jf::fail(where, "parameters.fitted_score_hi", "is below fitted_score_lo");
  if (scale == Scale::probability && (lo < 0.0 || hi > 1.0))
    jf::fail(where, "parameters.fitted_score_lo", "lies outside [0, 1] on the probability scale");
  auto x = jf::require_finite_array(p, "point_score", where, "parameters.point_score");
  auto y = jf::require_finite_array(p, "point_value", where, "parameters.point_value");
  auto w = jf::require_finite_array(p, "point_weight", where, "parameters.point_weight");
  if (x.empty()) jf::fail(where, "parameters.point_score", "is empty", "at least one point");
  if (y.size() != x.size() || w.size() != x.size())
    jf::fail(where, "parameters", "has point arrays of different lengths", "equal lengths");
  for (std::size_t i = 0; i < x.size(); ++i) {
    const std::string at = "[" + std::to_string(i) + "]";
    if (!(x[i] >= lo && x[i] <= hi))
      jf::fail(where, "parameters.point_score" + at, "lies outside [fitted_score_lo, fitted_score_hi]");
    if (i > 0 && !(x[i] > x[i - 1]))
      jf::fail(where, "parameters.point_score" + at, "does not lie above the previous point", "increasing scores");
    if (!(y[i] >= 0.0 && y[i] <= 1.0)) jf::fail(where, "parameters.point_value" + at, "lies outside [0, 1]", "a probability");
    if (i > 0 && !(y[i] > y[i - 1]))
      jf::fail(where, "parameters.point_value" + at, "does not lie above the previous point's value",
               "increasing values");
    if (!(w[i] > 0.0)) jf::fail(where, "parameters.point_weight" + at, "is not positive");
  }
  return std::make_unique<CenteredIsotonicMap>(scale, std::move(x), std::move(y), std::move(w), lo, hi, tilt);
}

}  // namespace plumb
