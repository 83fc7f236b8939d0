#include "plumb/calibration_map.hpp"

#include <algorithm>
#include <cmath>

namespace plumb {

std::string kind_with_article(std::string_view kind) {
  const bool vowel = !kind.empty() && std::string_view("aeiouAEIOU").find(kind.front()) != std::string_view::npos;
  return (vowel ? "an " : "a ") + std::string(kind);
}

double mean_log_loss(const CalibrationMap& map, const FitData& data) {
  double loss = 0.0, total = 0.0;
  for (std::size_t i = 0; i < data.score.size(); ++i) {
    const double w = data.weight.empty() ? 1.0 : data.weight[i];
    if (!(w > 0.0)) continue;
    const double p = std::clamp(map(data.score[i]), probability_clip, 1.0 - probability_clip);
    loss -= w * (data.label[i] > 0.5 ? std::log(p) : std::log1p(-p));
    total += w;
  }
  return total > 0.0 ? loss / total : 0.0;
}

}  // namespace plumb
