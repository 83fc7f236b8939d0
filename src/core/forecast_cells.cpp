#include "plumb/forecast_cells.hpp"

#include <array>
#include <cstring>
#include <string>

#include "plumb/error.hpp"

#include "core/metric_input.hpp"

namespace plumb {
namespace {

// Sorts row indices by forecast, stably. The forecasts are in [0, 1], so
// their IEEE bit patterns (with -0 made +0) order as the values do: an LSD
// radix sort on four 16-bit digits, which is stable. The four digit counts
// come from one pass over the rows (they do not depend on the order), and a
// digit every row shares is skipped. Memory: two arrays of 32-bit indices.
std::uint64_t key_of(double f) noexcept {
  const double g = f + 0.0;  // -0 + 0 is +0
  std::uint64_t key;
  std::memcpy(&key, &g, sizeof key);
  return key;
}

}  // namespace

std::vector<std::uint32_t> sorted_forecast_order(std::span<const double> forecast) {
  const std::size_t n = forecast.size();
  if (n > 0xFFFFFFFFull)
    throw Error(ErrorKind::usage, "too many rows for one report column", {}, std::to_string(n),
                "at most 4294967295 rows");
  constexpr std::size_t radix = 1u << 16;
  std::vector<std::array<std::uint32_t, 4>> count(radix, std::array<std::uint32_t, 4>{});
  for (std::size_t i = 0; i < n; ++i) {
    const std::uint64_t key = key_of(forecast[i]);
    for (int d = 0; d < 4; ++d) ++count[(key >> (16 * d)) & (radix - 1)][static_cast<std::size_t>(d)];
  }
  std::vector<std::uint32_t> a(n), b;
  for (std::size_t i = 0; i < n; ++i) a[i] = static_cast<std::uint32_t>(i);
  for (int d = 0; d < 4; ++d) {
    const auto dd = static_cast<std::size_t>(d);
    bool one_digit = false;
    for (std::size_t v = 0; v < radix; ++v)
      if (count[v][dd] == n) one_digit = true;
    if (one_digit || n == 0) continue;
    std::vector<std::size_t> start(radix);
    std::size_t sum = 0;
    for (std::size_t v = 0; v < radix; ++v) {
      start[v] = sum;
      sum += count[v][dd];
    }
    b.resize(n);
    for (std::uint32_t i : a) b[start[(key_of(forecast[i]) >> (16 * d)) & (radix - 1)]++] = i;
    a.swap(b);
  }
  return a;
}

ForecastCells make_forecast_cells(std::span<const double> forecast, std::span<const double> label,
                                  std::span<const double> weight) {
  detail::check_metric_input("make_forecast_cells", forecast, label, weight);
  ForecastCells c;
  c.order = sorted_forecast_order(forecast);
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
