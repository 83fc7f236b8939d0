#include "plumb/maps/isotonic_map.hpp"

#include <algorithm>

#include "core/json_fields.hpp"
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
  // The last block starting at or before the score.
  const std::size_t i =
      static_cast<std::size_t>(std::upper_bound(lo_.begin(), lo_.end(), score) - lo_.begin()) - 1;
  const PavBlock& left = blocks_[i];
  if (score <= left.score_hi || !interpolate_) return {left.value, false, false};
  const PavBlock& right = blocks_[i + 1];
  const double t = (score - left.score_hi) / (right.score_lo - left.score_hi);
  double p = left.value + t * (right.value - left.value);
  p = std::clamp(p, left.value, right.value);
  return {p, false, false};
}

nlohmann::json IsotonicMap::parameters() const {
  nlohmann::json lo = nlohmann::json::array(), hi = nlohmann::json::array(),
                 value = nlohmann::json::array(), weight = nlohmann::json::array();
  for (const PavBlock& b : blocks_) {
    lo.push_back(b.score_lo);
    hi.push_back(b.score_hi);
    value.push_back(b.value);
    weight.push_back(b.weight);
  }
  return {{"between_blocks", interpolate_ ? "linear" : "step"},
          {"block_score_lo", lo},
          {"block_score_hi", hi},
          {"block_value", value},
          {"block_weight", weight}};
}

std::unique_ptr<CalibrationMap> IsotonicMap::from_parameters(Scale scale, const nlohmann::json& p,
                                                             const std::string& where) {
  namespace jf = json_fields;
  const std::string between = jf::require_string(p, "between_blocks", where, "parameters.between_blocks");
  if (between != "linear" && between != "step")
    jf::fail(where, "parameters.between_blocks", "is '" + between + "'", "'linear' or 'step'");
  const auto lo = jf::require_finite_array(p, "block_score_lo", where, "parameters.block_score_lo");
  const auto hi = jf::require_finite_array(p, "block_score_hi", where, "parameters.block_score_hi");
  const auto value = jf::require_finite_array(p, "block_value", where, "parameters.block_value");
  const auto weight = jf::require_finite_array(p, "block_weight", where, "parameters.block_weight");
  if (lo.empty()) jf::fail(where, "parameters.block_score_lo", "is empty", "at least one block");
  if (hi.size() != lo.size() || value.size() != lo.size() || weight.size() != lo.size())
    jf::fail(where, "parameters", "has block arrays of different lengths", "equal lengths");
  std::vector<PavBlock> blocks(lo.size());
  for (std::size_t i = 0; i < lo.size(); ++i) {
    const std::string at = "[" + std::to_string(i) + "]";
    if (!(lo[i] <= hi[i])) jf::fail(where, "parameters.block_score_hi" + at, "is below its block's low end");
    if (i > 0 && !(lo[i] > hi[i - 1]))
      jf::fail(where, "parameters.block_score_lo" + at, "does not lie above the previous block",
               "blocks in increasing score order");
    if (!(value[i] >= 0.0 && value[i] <= 1.0))
      jf::fail(where, "parameters.block_value" + at, "lies outside [0, 1]", "a probability");
    if (i > 0 && !(value[i] >= value[i - 1]))
      jf::fail(where, "parameters.block_value" + at, "is below the previous block's value",
               "non-decreasing knots");
    if (!(weight[i] > 0.0)) jf::fail(where, "parameters.block_weight" + at, "is not positive");
    if (scale == Scale::probability && (lo[i] < 0.0 || hi[i] > 1.0))
      jf::fail(where, "parameters.block_score_lo" + at, "lies outside [0, 1] on the probability scale");
    blocks[i] = PavBlock{lo[i], hi[i], value[i], weight[i]};
  }
  return std::make_unique<IsotonicMap>(scale, std::move(blocks), between == "linear");
}

}  // namespace plumb
