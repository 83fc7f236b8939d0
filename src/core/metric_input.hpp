#pragma once
// Shared input checks of the metric functions (contract in plumb/scores.hpp).
#include <cstddef>
#include <span>

#include "plumb/error.hpp"

namespace plumb::detail {

inline void check_metric_input(const char* what, std::span<const double> forecast,
                               std::span<const double> label, std::span<const double> weight) {
  if (forecast.size() != label.size() || (!weight.empty() && weight.size() != forecast.size()))
    throw Error(ErrorKind::internal,
                std::string(what) + ": forecast, label and weight columns differ in length");
}

inline double weight_at(std::span<const double> weight, std::size_t i) noexcept {
  return weight.empty() ? 1.0 : weight[i];
}

inline void require_positive_total(const char* what, double total) {
  if (!(total > 0.0))
    throw Error(ErrorKind::fit, std::string(what) + ": the rows have no weight",
                {}, {}, "at least one row of positive weight");
}

}  // namespace plumb::detail
