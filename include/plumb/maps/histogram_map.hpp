#pragma once
// Histogram binning (Zadrozny and Elkan 2001): equal-mass bins of the score,
// each mapped to its observed (weighted) frequency of positives.
#include <memory>
#include <vector>

#include "plumb/calibration_map.hpp"

namespace plumb {

struct HistogramBin {
  double score_lo;  // smallest fitted score in the bin
  double score_hi;  // largest fitted score in the bin
  double value;     // weighted frequency of positives in the bin
  double weight;    // total weight of the bin
};

class HistogramMap final : public CalibrationMap {
 public:
  HistogramMap(Scale scale, std::vector<HistogramBin> bins);

  static bool accepts(Scale) noexcept { return true; }
  // Bins hold about equal weight: rows of one distinct score never straddle
  // two bins, and each distinct score goes to the bin holding the midpoint of
  // its cumulative weight. Fewer bins than asked result when distinct scores
  // are few; the diagnostics say so.
  static std::unique_ptr<CalibrationMap> fit(const FitData& data, const MapOptions& options);
  static std::unique_ptr<CalibrationMap> from_parameters(Scale scale, const nlohmann::json& parameters,
                                                         const std::string& where);

  std::string_view kind() const noexcept override { return "histogram"; }
  Scale scale() const noexcept override { return scale_; }
  // A score between two bins belongs to the nearer one (the boundary is the
  // midpoint of the gap; a score exactly on it goes left). Outside the fitted
  // scores: the end bin, flagged outside_fit_range.
  Mapped map(double score) const noexcept override;
  nlohmann::json parameters() const override;
  bool monotone() const noexcept override { return monotone_; }
  // Bin frequencies fall by noise between neighbouring bins; the map as a
  // whole decreases only when the weighted rank correlation of score and
  // frequency is negative: sum over bins of w_b (R_b - W/2)(v_b - v_mean) < 0,
  // with R_b the mid-rank of the bin's rows (the weight before it plus half
  // its own), W the total weight and v_mean the weighted mean frequency.
  bool decreases_overall() const noexcept override { return decreases_; }
  bool reaches_zero_or_one() const noexcept override { return certain_; }

  const std::vector<HistogramBin>& bins() const noexcept { return bins_; }
  // The decision boundary to the right of each bin but the last: a score
  // belongs to the first bin whose boundary is at or above it.
  const std::vector<double>& boundaries() const noexcept { return upper_; }

 private:
  Scale scale_;
  std::vector<HistogramBin> bins_;
  std::vector<double> upper_;  // decision boundary to the right of each bin but the last
  bool monotone_ = true;
  bool decreases_ = false;
  bool certain_ = false;
};

}  // namespace plumb
