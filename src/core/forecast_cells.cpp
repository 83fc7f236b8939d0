#include "plumb/forecast_cells.hpp"

#include <array>
#include <cstring>

#include "core/metric_input.hpp"

namespace plumb {
namespace {

// Sorts row indices by forecast, stably. The forecasts are in [0, 1], so
// their IEEE bit patterns (with -0 made +0) order as the values do; an LSD
// radix sort on 11-bit digits is stable, and digits every key shares are
// skipped.
std::vector<std::size_t> sorted_order(std::span<const double> forecast) {
  const std::size_t n = forecast.size();
  struct Item {
    std::uint64_t key;
    std::size_t row;
  };
  std::vector<Item> a(n), b(n);
  for (std::size_t i = 0; i < n; ++i) {
    const double f = forecast[i] + 0.0;  // -0 + 0 is +0
    std::uint64_t key;
    std::memcpy(&key, &f, sizeof key);
    a[i] = {key, i};
  }
  constexpr int bits = 11;
  constexpr std::size_t radix = std::size_t{1} << bits;
  for (int shift = 0; shift < 64; shift += bits) {
    std::vector<std::size_t> count(radix + 1, 0);
    for (const Item& it : a) ++count[((it.key >> shift) & (radix - 1)) + 1];
    bool one_digit = false;
    for (std::size_t d = 1; d <= radix; ++d)
      if (count[d] == n) one_digit = true;
    if (one_digit) continue;
    for (std::size_t d = 1; d <= radix; ++d) count[d] += count[d - 1];
    for (const Item& it : a) b[count[(it.key >> shift) & (radix - 1)]++] = it;
    a.swap(b);
  }
  std::vector<std::size_t> order(n);
  for (std::size_t k = 0; k < n; ++k) order[k] = a[k].row;
  return order;
}

}  // namespace

ForecastCells make_forecast_cells(std::span<const double> forecast, std::span<const double> label,
                                  std::span<const double> weight) {
  detail::check_metric_input("make_forecast_cells", forecast, label, weight);
  ForecastCells c;
  c.order = sorted_order(forecast);
  const std::size_t n = forecast.size();
  for (std::size_t k = 0; k < n;) {
    const double f = forecast[c.order[k]];
    double w = 0.0, pos = 0.0, neg = 0.0, sq = 0.0;
    const std::size_t start = k;
    for (; k < n && forecast[c.order[k]] == f; ++k) {
      const std::size_t i = c.order[k];
      const double wi = detail::weight_at(weight, i);
      w += wi;
      pos += wi * label[i];
      neg += wi * (1.0 - label[i]);
      sq += wi * wi;
    }
    c.forecast.push_back(f);
    c.weight.push_back(w);
    c.positives.push_back(pos);
    c.negatives.push_back(neg);
    c.weight_sq.push_back(sq);
    c.rows.push_back(k - start);
    c.first.push_back(start);
  }
  c.first.push_back(n);
  return c;
}

}  // namespace plumb
