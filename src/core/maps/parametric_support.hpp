#pragma once
// Small pieces shared by the parametric maps (platt, beta, temperature).
#include <algorithm>
#include <cmath>
#include <cstddef>

#include "plumb/calibration_map.hpp"
#include "plumb/error.hpp"
#include "plumb/scale.hpp"

namespace plumb::parametric {

inline double weight_at(const FitData& data, std::size_t i) noexcept {
  return data.weight.empty() ? 1.0 : data.weight[i];
}

struct ClassTotals {
  double positive = 0.0;  // weighted count of rows labelled 1
  double negative = 0.0;  // weighted count of rows labelled 0
};

// Weighted class totals; throws plumb::Error(fit) unless both are positive,
// because no parametric map has a finite fit on one class.
inline ClassTotals class_totals(const FitData& data) {
  ClassTotals t;
  for (std::size_t i = 0; i < data.label.size(); ++i) {
    const double w = weight_at(data, i);
    if (!(w > 0.0)) continue;
    (data.label[i] > 0.5 ? t.positive : t.negative) += w;
  }
  if (!(t.positive > 0.0) || !(t.negative > 0.0))
    throw Error(ErrorKind::fit, "the calibration rows of positive weight do not hold both labels", {}, {},
                "both positive and negative labels");
  return t;
}

// Weighted mean log loss of `map` on `data`, probabilities clipped into
// [probability_clip, 1 - probability_clip]: the same definition as
// plumb::mean_log_loss, kept here so the parametric maps do not depend on the
// registry's translation unit.
inline double mean_log_loss(const CalibrationMap& map, const FitData& data) {
  double loss = 0.0, total = 0.0;
  for (std::size_t i = 0; i < data.score.size(); ++i) {
    const double w = weight_at(data, i);
    if (!(w > 0.0)) continue;
    const double p = std::clamp(map(data.score[i]), probability_clip, 1.0 - probability_clip);
    loss -= w * (data.label[i] > 0.5 ? std::log(p) : std::log1p(-p));
    total += w;
  }
  return total > 0.0 ? loss / total : 0.0;
}

}  // namespace plumb::parametric
