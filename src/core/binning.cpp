#include "plumb/binning.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>

#include "core/metric_input.hpp"
#include "plumb/forecast_cells.hpp"

namespace plumb {

std::string_view to_string(BinningKind kind) noexcept {
  return kind == BinningKind::equal_mass ? "equal_mass" : "equal_width";
}

namespace {

constexpr double nan = std::numeric_limits<double>::quiet_NaN();

}  // namespace

std::uint32_t equal_width_bin(double p, std::size_t k) noexcept {
  const double b = std::floor(static_cast<double>(k) * p);
  if (!(b > 0.0)) return 0;
  return static_cast<std::uint32_t>(std::min(b, static_cast<double>(k - 1)));
}

namespace {

// Both entry points share this; `order` lists the rows by forecast, or is
// null when the rows are already sorted.
template <class Index>
Binning make_binning_in_order(std::span<const double> forecast, std::span<const double> weight,
                              BinningKind kind, std::size_t bins, const Index* order);

}  // namespace

Binning make_binning(std::span<const double> forecast, std::span<const double> weight,
                     BinningKind kind, std::size_t bins) {
  if (kind == BinningKind::equal_width)
    return make_binning_in_order<std::size_t>(forecast, weight, kind, bins, nullptr);
  // Non-negative forecasts (every probability) are sorted by the radix sort
  // of forecast_cells.hpp, which gives the stable sort's order; any other
  // column (negative scores, NaN) by the stable sort itself.
  if (forecast.size() <= 0xFFFFFFFFull &&
      std::all_of(forecast.begin(), forecast.end(), [](double f) { return f >= 0.0; })) {
    const std::vector<std::uint32_t> order = sorted_forecast_order(forecast);
    return make_binning_in_order(forecast, weight, kind, bins, order.data());
  }
  std::vector<std::size_t> order(forecast.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return forecast[a] < forecast[b]; });
  return make_binning_in_order(forecast, weight, kind, bins, order.data());
}

Binning make_binning_ordered(std::span<const double> forecast, std::span<const double> weight,
                             BinningKind kind, std::size_t bins, std::span<const std::uint32_t> order) {
  if (order.size() != forecast.size())
    throw Error(ErrorKind::internal, "make_binning: the order was made for other rows");
  return make_binning_in_order(forecast, weight, kind, bins,
                               kind == BinningKind::equal_mass ? order.data() : static_cast<const std::uint32_t*>(nullptr));
}

Binning mass_binning_of_cell_sums(const ForecastCells& cells, double total, std::size_t bins,
                                  std::vector<std::uint32_t>* cell_bin) {
  if (bins == 0)
    throw Error(ErrorKind::usage, "the number of bins must be positive", {}, "0", "1 or more");
  Binning out;
  out.kind = BinningKind::equal_mass;
  out.bin_count = bins;
  out.edge_lo.assign(bins, nan);
  out.edge_hi.assign(bins, nan);
  if (cell_bin) cell_bin->resize(cells.size());
  double before = 0.0;
  const double k = static_cast<double>(bins);
  for (std::size_t c = 0; c < cells.size(); ++c) {
    const double group = cells.weight[c];
    const double pos = total > 0.0 ? k * (before + 0.5 * group) / total : 0.0;
    const auto b = static_cast<std::uint32_t>(std::min(std::floor(pos), k - 1.0));
    if (cell_bin) (*cell_bin)[c] = b;
    const double p = cells.forecast[c];
    if (std::isnan(out.edge_lo[b])) out.edge_lo[b] = p;
    out.edge_hi[b] = p;
    before += group;
  }
  return out;
}

Binning make_mass_binning_of_cells(const ForecastCells& cells, double total, std::size_t bins) {
  std::vector<std::uint32_t> cell_bin;
  Binning out = mass_binning_of_cell_sums(cells, total, bins, &cell_bin);
  out.bin_of_row.resize(cells.order.size());
  for (std::size_t c = 0; c < cells.size(); ++c)
    for (std::size_t t = cells.first[c]; t < cells.first[c + 1]; ++t) out.bin_of_row[cells.order[t]] = cell_bin[c];
  return out;
}

Binning make_binning_sorted(std::span<const double> forecast, std::span<const double> weight,
                            BinningKind kind, std::size_t bins) {
  return make_binning_in_order<std::size_t>(forecast, weight, kind, bins, nullptr);
}

namespace {

template <class Index>
Binning make_binning_in_order(std::span<const double> forecast, std::span<const double> weight,
                              BinningKind kind, std::size_t bins, const Index* order) {
  if (bins == 0)
    throw Error(ErrorKind::usage, "the number of bins must be positive", {}, "0", "1 or more");
  if (!weight.empty() && weight.size() != forecast.size())
    throw Error(ErrorKind::internal, "make_binning: forecast and weight differ in length");
  const std::size_t n = forecast.size();
  Binning out;
  out.kind = kind;
  out.bin_count = bins;
  out.bin_of_row.resize(n);
  out.edge_lo.assign(bins, nan);
  out.edge_hi.assign(bins, nan);
  if (kind == BinningKind::equal_width) {
    for (std::size_t i = 0; i < n; ++i) out.bin_of_row[i] = equal_width_bin(forecast[i], bins);
    for (std::size_t b = 0; b < bins; ++b) {
      out.edge_lo[b] = static_cast<double>(b) / static_cast<double>(bins);
      out.edge_hi[b] = static_cast<double>(b + 1) / static_cast<double>(bins);
    }
    return out;
  }
  auto row = [order](std::size_t k) -> std::size_t { return order ? static_cast<std::size_t>(order[k]) : k; };
  double total = 0.0;
  for (std::size_t i = 0; i < n; ++i) total += detail::weight_at(weight, i);
  double before = 0.0;
  const double k = static_cast<double>(bins);
  for (std::size_t s = 0; s < n;) {
    std::size_t e = s;
    double group = 0.0;
    while (e < n && forecast[row(e)] == forecast[row(s)]) {
      group += detail::weight_at(weight, row(e));
      ++e;
    }
    // A zero total (all weights 0) puts everything in bin 0 rather than dividing by it.
    const double pos = total > 0.0 ? k * (before + 0.5 * group) / total : 0.0;
    const auto b = static_cast<std::uint32_t>(std::min(std::floor(pos), k - 1.0));
    for (std::size_t t = s; t < e; ++t) out.bin_of_row[row(t)] = b;
    const double p = forecast[row(s)];
    if (std::isnan(out.edge_lo[b])) out.edge_lo[b] = p;
    out.edge_hi[b] = p;
    before += group;
    s = e;
  }
  return out;
}

}  // namespace

std::vector<BinSums> bin_sums(std::span<const double> forecast, std::span<const double> label,
                              std::span<const double> weight, const Binning& binning) {
  detail::check_metric_input("bin_sums", forecast, label, weight);
  if (binning.bin_of_row.size() != forecast.size())
    throw Error(ErrorKind::internal, "bin_sums: the binning was made for other rows");
  std::vector<BinSums> sums(binning.bin_count);
  for (auto& s : sums) s.forecast_min = s.forecast_max = nan;
  for (std::size_t i = 0; i < forecast.size(); ++i) {
    BinSums& s = sums[binning.bin_of_row[i]];
    const double w = detail::weight_at(weight, i);
    const double p = forecast[i];
    if (s.rows == 0) {
      s.forecast_min = s.forecast_max = p;
    } else {
      s.forecast_min = std::min(s.forecast_min, p);
      s.forecast_max = std::max(s.forecast_max, p);
    }
    ++s.rows;
    s.weight += w;
    s.weight_sq += w * w;
    s.forecast += w * p;
    s.label += w * label[i];
  }
  return sums;
}

}  // namespace plumb
