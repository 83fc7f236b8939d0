#include "plumb/maps/isotonic_map.hpp"

#include <algorithm>
#include <cmath>

#include "core/json_fields.hpp"
#include "core/maps/piecewise_support.hpp"
#include "plumb/error.hpp"

namespace plumb {

IsotonicMap::IsotonicMap(Scale scale, std::vector<PavBlock> blocks, bool interpolate)
    : scale_(scale), blocks_(std::move(blocks)), interpolate_(interpolate) {
  lo_.reserve(blocks_.size());
  for (const PavBlock& b : blocks_) lo_.push_back(b.score_lo);
}

std::unique_ptr<CalibrationMap> IsotonicMap::fit(const FitData& data, const MapOptions& options) {
  auto map = std::make_unique<IsotonicMap>(data.scale, pav_fit(data.score, data.label, data.weight),
                                           options.isotonic_interpolate);
  if (map->blocks_.empty()) throw Error(ErrorKind::fit, "no rows of positive weight to fit");
  map->diagnostics_.iterations = 1;
  map->diagnostics_.converged = true;
  map->diagnostics_.log_loss = mean_log_loss(*map, data);
  map->diagnostics_.notes.push_back(std::to_string(map->blocks_.size()) + " blocks");
  return map;
}

Mapped IsotonicMap::map(double score) const noexcept {
  if (score < blocks_.front().score_lo) return {blocks_.front().value, true, false};
  if (score > blocks_.back().score_hi) return {blocks_.back().value, true, false};
  // The last block starting at or before the score (lo_[0] <= score here).
  // A binary search whose step is a conditional move, not a branch: scores
  // arrive in no order, so a branch would be mispredicted half the time.
  const double* base = lo_.data();
  for (std::size_t n = lo_.size(); n > 1;) {
    const std::size_t half = n / 2;
    base = base[half] <= score ? base + half : base;
    n -= half;
  }
  const std::size_t i = static_cast<std::size_t>(base - lo_.data());
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
