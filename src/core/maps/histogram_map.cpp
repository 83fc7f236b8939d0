#include "plumb/maps/histogram_map.hpp"

#include <algorithm>
#include <cmath>
#include <numeric>

#include "core/json_fields.hpp"
#include "core/maps/piecewise_support.hpp"
#include "plumb/error.hpp"

namespace plumb {

HistogramMap::HistogramMap(Scale scale, std::vector<HistogramBin> bins) : scale_(scale), bins_(std::move(bins)) {
  for (std::size_t i = 0; i + 1 < bins_.size(); ++i) {
    double mid = bins_[i].score_hi + 0.5 * (bins_[i + 1].score_lo - bins_[i].score_hi);
    // Margin scores near the ends of the double range: the gap may overflow.
    if (!std::isfinite(mid)) mid = 0.5 * bins_[i].score_hi + 0.5 * bins_[i + 1].score_lo;
    upper_.push_back(mid);
    if (bins_[i + 1].value < bins_[i].value) monotone_ = false;
  }
  double total = 0.0, positive = 0.0;
  for (const HistogramBin& b : bins_) {
    total += b.weight;
    positive += b.weight * b.value;
    if (b.value == 0.0 || b.value == 1.0) certain_ = true;
  }
  if (!monotone_ && total > 0.0) {
    const double mean = positive / total;
    double before = 0.0, covariance = 0.0;
    for (const HistogramBin& b : bins_) {
      covariance += b.weight * (before + 0.5 * b.weight - 0.5 * total) * (b.value - mean);
      before += b.weight;
    }
    decreases_ = covariance < 0.0;
  }
}

std::unique_ptr<CalibrationMap> HistogramMap::fit(const FitData& data, const MapOptions& options) {
  if (options.histogram_bins < 1)
    throw Error(ErrorKind::usage, "the histogram map needs at least one bin", {},
                std::to_string(options.histogram_bins), "a bin count of 1 or more");
  const std::size_t n = data.score.size();
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return data.score[a] < data.score[b]; });
  auto weight_of = [&](std::size_t i) { return data.weight.empty() ? 1.0 : data.weight[i]; };

  // Distinct scores with their weight and positive weight.
  struct Group {
    double score, w, wy;
  };
  std::vector<Group> groups;
  double total = 0.0;
  for (std::size_t k = 0; k < n;) {
    const double s = data.score[order[k]];
    Group g{s, 0.0, 0.0};
    for (; k < n && data.score[order[k]] == s; ++k) {
      g.w += weight_of(order[k]);
      g.wy += weight_of(order[k]) * data.label[order[k]];
    }
    if (g.w > 0.0) {
      groups.push_back(g);
      total += g.w;
    }
  }
  if (groups.empty()) throw Error(ErrorKind::fit, "no rows of positive weight to fit");

  const auto asked = static_cast<std::size_t>(options.histogram_bins);
  std::vector<HistogramBin> bins;
  std::vector<double> bin_wy;
  std::size_t current = static_cast<std::size_t>(-1);
  double cumulative = 0.0;
  for (const Group& g : groups) {
    const double mid = cumulative + 0.5 * g.w;
    cumulative += g.w;
    const auto bin = std::min(asked - 1, static_cast<std::size_t>(std::floor(mid / total * static_cast<double>(asked))));
    if (bins.empty() || bin != current) {
      bins.push_back(HistogramBin{g.score, g.score, 0.0, 0.0});
      bin_wy.push_back(0.0);
      current = bin;
    }
    bins.back().score_hi = g.score;
    bins.back().weight += g.w;
    bin_wy.back() += g.wy;
  }
  for (std::size_t i = 0; i < bins.size(); ++i) bins[i].value = std::clamp(bin_wy[i] / bins[i].weight, 0.0, 1.0);

  auto map = std::make_unique<HistogramMap>(data.scale, std::move(bins));
  map->diagnostics_.iterations = 1;
  if (options.row_diagnostics) map->diagnostics_.log_loss = mean_log_loss(*map, data);
  map->diagnostics_.notes.push_back(std::to_string(map->bins_.size()) + " bins");
  if (map->bins_.size() < asked)
    map->diagnostics_.notes.push_back("fewer bins than the " + std::to_string(asked) +
                                      " asked: the scores have too few distinct values");
  if (!map->monotone_) map->diagnostics_.notes.push_back("bin frequencies are not monotone in the score");
  return map;
}

Mapped HistogramMap::map(double score) const noexcept {
  const bool outside = score < bins_.front().score_lo || score > bins_.back().score_hi;
  const auto i = static_cast<std::size_t>(std::lower_bound(upper_.begin(), upper_.end(), score) - upper_.begin());
  return {bins_[i].value, outside, false};
}

nlohmann::json HistogramMap::parameters() const {
  nlohmann::json out = nlohmann::json::object();
  piecewise::write_pieces(out, "bin", bins_);
  return out;
}

std::unique_ptr<CalibrationMap> HistogramMap::from_parameters(Scale scale, const nlohmann::json& p,
                                                              const std::string& where) {
  return std::make_unique<HistogramMap>(
      scale, piecewise::read_pieces<HistogramBin>(p, "bin", "bin", scale, /*non_decreasing=*/false, where));
}

}  // namespace plumb
