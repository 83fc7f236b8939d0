#include "plumb/maps/isotonic_map.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>

#include "core/json_fields.hpp"
#include "core/maps/piecewise_support.hpp"
#include "plumb/error.hpp"

namespace plumb {

IsotonicMap::IsotonicMap(Scale scale, std::vector<PavBlock> blocks, bool interpolate)
    : scale_(scale), blocks_(std::move(blocks)), interpolate_(interpolate) {
  lo_.reserve(blocks_.size());
  for (const PavBlock& b : blocks_) lo_.push_back(b.score_lo);
  if (lo_.size() < 16 || lo_.size() > std::numeric_limits<std::uint32_t>::max()) return;
  const double width = lo_.back() - lo_.front();
  const std::size_t buckets = std::min<std::size_t>(4 * lo_.size(), std::size_t{1} << 16);
  if (!(std::isfinite(width) && width > 0.0)) return;
  guide_origin_ = lo_.front();
  guide_scale_ = static_cast<double>(buckets) / width;
  if (!std::isfinite(guide_scale_)) return;
  guide_.resize(buckets);
  for (std::size_t b = 0; b < buckets; ++b) {
    const double start = guide_origin_ + static_cast<double>(b) / guide_scale_;
    const auto after = std::upper_bound(lo_.begin(), lo_.end(), start);
    guide_[b] = static_cast<std::uint32_t>(after == lo_.begin() ? 0 : after - lo_.begin() - 1);
  }
}

// The last block starting at or before the score; precondition lo_[0] <= score.
std::size_t IsotonicMap::block_at(double score) const noexcept {
  std::size_t j = 0;
  if (!guide_.empty()) {
    // The guide's bucket, then a few steps to the exact block: down when
    // rounding put the score one bucket high, up through the blocks that
    // start inside the bucket. The answer does not depend on the guide.
    const double at = (score - guide_origin_) * guide_scale_;
    const std::size_t b = at < static_cast<double>(guide_.size()) ? static_cast<std::size_t>(at) : guide_.size() - 1;
    j = guide_[b];
    while (j > 0 && lo_[j] > score) --j;
    for (int steps = 0; j + 1 < lo_.size() && lo_[j + 1] <= score; ++j)
      if (++steps == 8) break;
    if (j + 1 == lo_.size() || lo_[j + 1] > score) return j;
  }
  // A binary search whose step is a conditional move, not a branch: scores
  // arrive in no order, so a branch would be mispredicted half the time.
  const double* base = lo_.data() + j;
  for (std::size_t n = lo_.size() - j; n > 1;) {
    const std::size_t half = n / 2;
    base = base[half] <= score ? base + half : base;
    n -= half;
  }
  return static_cast<std::size_t>(base - lo_.data());
}

std::unique_ptr<CalibrationMap> IsotonicMap::fit(const FitData& data, const MapOptions& options) {
  auto map = std::make_unique<IsotonicMap>(data.scale, pav_fit(data.score, data.label, data.weight),
                                           options.isotonic_interpolate);
  if (map->blocks_.empty()) throw Error(ErrorKind::fit, "no rows of positive weight to fit");
  map->diagnostics_.iterations = 1;
  map->diagnostics_.converged = true;
  if (options.row_diagnostics) map->diagnostics_.log_loss = mean_log_loss(*map, data);
  map->diagnostics_.notes.push_back(std::to_string(map->blocks_.size()) + " blocks");
  return map;
}

bool IsotonicMap::reaches_zero_or_one() const noexcept {
  for (const PavBlock& b : blocks_)
    if (b.value == 0.0 || b.value == 1.0) return true;
  return false;
}

Mapped IsotonicMap::map(double score) const noexcept {
  if (score < blocks_.front().score_lo) return {blocks_.front().value, true, false};
  if (score > blocks_.back().score_hi) return {blocks_.back().value, true, false};
  const std::size_t i = block_at(score);
  const PavBlock& left = blocks_[i];
  if (score <= left.score_hi || !interpolate_) return {left.value, false, false};
  const PavBlock& right = blocks_[i + 1];
  // Margin scores near the ends of the double range: the gap may overflow to
  // infinity (giving 0 or NaN) where the halves do not.
  const double gap = right.score_lo - left.score_hi;
  const double t = std::isfinite(gap)
                       ? (score - left.score_hi) / gap
                       : (0.5 * score - 0.5 * left.score_hi) / (0.5 * right.score_lo - 0.5 * left.score_hi);
  double p = left.value + t * (right.value - left.value);
  p = std::clamp(p, left.value, right.value);
  return {p, false, false};
}

nlohmann::json IsotonicMap::parameters() const {
  nlohmann::json out = {{"between_blocks", interpolate_ ? "linear" : "step"}};
  piecewise::write_pieces(out, "block", blocks_);
  return out;
}

std::unique_ptr<CalibrationMap> IsotonicMap::from_parameters(Scale scale, const nlohmann::json& p,
                                                             const std::string& where) {
  namespace jf = json_fields;
  const std::string between = jf::require_string(p, "between_blocks", where, "parameters.between_blocks");
  if (between != "linear" && between != "step")
    jf::fail(where, "parameters.between_blocks", "is '" + between + "'", "'linear' or 'step'");
  return std::make_unique<IsotonicMap>(
      scale, piecewise::read_pieces<PavBlock>(p, "block", "block", scale, /*non_decreasing=*/true, where),
      between == "linear");
}

}  // namespace plumb
