#include "plumb/maps/histogram_map.hpp"

#include <algorithm>
#include <cmath>
#include <numeric>

#include "core/json_fields.hpp"
#include "plumb/error.hpp"

namespace plumb {

HistogramMap::HistogramMap(Scale scale, std::vector<HistogramBin> bins) : scale_(scale), bins_(std::move(bins)) {
  for (std::size_t i = 0; i + 1 < bins_.size(); ++i) {
    upper_.push_back(bins_[i].score_hi + 0.5 * (bins_[i + 1].score_lo - bins_[i].score_hi));
    if (bins_[i + 1].value < bins_[i].value) monotone_ = false;
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
  map->diagnostics_.log_loss = mean_log_loss(*map, data);
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
  nlohmann::json lo = nlohmann::json::array(), hi = nlohmann::json::array(),
                 value = nlohmann::json::array(), weight = nlohmann::json::array();
  for (const HistogramBin& b : bins_) {
    lo.push_back(b.score_lo);
    hi.push_back(b.score_hi);
    value.push_back(b.value);
    weight.push_back(b.weight);
  }
  return {{"bin_score_lo", lo}, {"bin_score_hi", hi}, {"bin_value", value}, {"bin_weight", weight}};
}

std::unique_ptr<CalibrationMap> HistogramMap::from_parameters(Scale scale, const nlohmann::json& p,
                                                              const std::string& where) {
  namespace jf = json_fields;
  const auto lo = jf::require_finite_array(p, "bin_score_lo", where, "parameters.bin_score_lo");
  const auto hi = jf::require_finite_array(p, "bin_score_hi", where, "parameters.bin_score_hi");
  const auto value = jf::require_finite_array(p, "bin_value", where, "parameters.bin_value");
  const auto weight = jf::require_finite_array(p, "bin_weight", where, "parameters.bin_weight");
  if (lo.empty()) jf::fail(where, "parameters.bin_score_lo", "is empty", "at least one bin");
  if (hi.size() != lo.size() || value.size() != lo.size() || weight.size() != lo.size())
    jf::fail(where, "parameters", "has bin arrays of different lengths", "equal lengths");
  std::vector<HistogramBin> bins(lo.size());
  for (std::size_t i = 0; i < lo.size(); ++i) {
    const std::string at = "[" + std::to_string(i) + "]";
    if (!(lo[i] <= hi[i])) jf::fail(where, "parameters.bin_score_hi" + at, "is below its bin's low end");
    if (i > 0 && !(lo[i] > hi[i - 1]))
      jf::fail(where, "parameters.bin_score_lo" + at, "does not lie above the previous bin",
               "bins in increasing score order");
    if (!(value[i] >= 0.0 && value[i] <= 1.0))
      jf::fail(where, "parameters.bin_value" + at, "lies outside [0, 1]", "a probability");
    if (!(weight[i] > 0.0)) jf::fail(where, "parameters.bin_weight" + at, "is not positive");
    if (scale == Scale::probability && (lo[i] < 0.0 || hi[i] > 1.0))
      jf::fail(where, "parameters.bin_score_lo" + at, "lies outside [0, 1] on the probability scale");
    bins[i] = HistogramBin{lo[i], hi[i], value[i], weight[i]};
  }
  return std::make_unique<HistogramMap>(scale, std::move(bins));
}

}  // namespace plumb
