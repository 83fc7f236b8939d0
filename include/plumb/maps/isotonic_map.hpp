#pragma once
// Isotonic map: the pool-adjacent-violators fit of label on score, kept as
// its blocks (Zadrozny and Elkan 2002).
#include <cstdint>
#include <memory>
#include <vector>

#include "plumb/calibration_map.hpp"
#include "plumb/pav.hpp"

namespace plumb {

class IsotonicMap final : public CalibrationMap {
 public:
  IsotonicMap(Scale scale, std::vector<PavBlock> blocks, bool interpolate);

  static bool accepts(Scale) noexcept { return true; }
  static std::unique_ptr<CalibrationMap> fit(const FitData& data, const MapOptions& options);
  static std::unique_ptr<CalibrationMap> from_parameters(Scale scale, const nlohmann::json& parameters,
                                                         const std::string& where);

  std::string_view kind() const noexcept override { return "isotonic"; }
  Scale scale() const noexcept override { return scale_; }
  // At a score inside a block: the block's value exactly. Between blocks:
  // linear interpolation from the right end of the left block to the left
  // end of the right block, or the left block's value when not
  // interpolating. Outside the fitted scores: the nearest block's value,
  // flagged outside_fit_range.
  Mapped map(double score) const noexcept override;
  nlohmann::json parameters() const override;
  bool monotone() const noexcept override { return true; }
  bool reaches_zero_or_one() const noexcept override;

  const std::vector<PavBlock>& blocks() const noexcept { return blocks_; }

 private:
  Scale scale_;
  std::vector<PavBlock> blocks_;
  std::size_t block_at(double score) const noexcept;

  std::vector<double> lo_;  // blocks_[i].score_lo, contiguous for the search
  // A guide for the search: the score range [lo_.front(), lo_.back()] cut
  // into equal buckets, each holding the last block starting at or before
  // the bucket's start. Empty when the range is not a finite positive width.
  std::vector<std::uint32_t> guide_;
  double guide_origin_ = 0.0, guide_scale_ = 0.0;
  bool interpolate_;
};

}  // namespace plumb
