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
  // The entries of a tally come in pairs of one score (its negatives, its
  // positives): the map is a function of the score, so the last score's
  // probability serves the next entry when the score is the same double
  // (its bits: -0 and +0 may map apart).
  double last_score = 0.0, last_p = 0.0;
  bool have = false;
  for (std::size_t i = 0; i < data.score.size(); ++i) {
    const double w = data.weight.empty() ? 1.0 : data.weight[i];
    if (!(w > 0.0)) continue;
    const double s = data.score[i];
    if (!have || !(s == last_score && std::signbit(s) == std::signbit(last_score))) {
      last_p = std::clamp(map(s), probability_clip, 1.0 - probability_clip);
      last_score = s;
      have = true;
    }
    const double p = last_p;
    loss -= w * (data.label[i] > 0.5 ? std::log(p) : std::log1p(-p));
    total += w;
  }
  return total > 0.0 ? loss / total : 0.0;
}

}  // namespace plumb
