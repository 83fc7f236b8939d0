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

}  // namespace plumb::parametric
