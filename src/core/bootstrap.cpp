#include "plumb/bootstrap.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <numeric>
#include <random>
#include <exception>
#include <thread>

#include "core/metric_input.hpp"
#include "plumb/auc.hpp"
#include "plumb/calibration_error.hpp"
#include "plumb/count_draws.hpp"
#include "plumb/pav.hpp"

namespace plumb {
namespace {

constexpr double nan = std::numeric_limits<double>::quiet_NaN();

std::uint64_t splitmix64(std::uint64_t x) noexcept {
  x += 0x9E3779B97F4A7C15ull;
  x = (x ^ (x >> 30)) * 0xBF58476D1CE4E5B9ull;
  x = (x ^ (x >> 27)) * 0x94D049BB133111EBull;
  return x ^ (x >> 31);
}

std::mt19937_64 replicate_generator(std::uint64_t seed, std::size_t r) {
  return std::mt19937_64(splitmix64(seed + (static_cast<std::uint64_t>(r) + 1) *
                                               0x9E3779B97F4A7C15ull));
}

// The Poisson(count) laws of the bootstrap's cells: a count up to 64 draws
// by inversion of a table shared by all, a larger one by PTRS with its own
// constants, kept for those cells only, in cell order (a replicate visits
// the cells in order, so the next large cell's law is the next in `large`).
struct CellPoisson {
  const detail::PoissonTables& tables = detail::poisson_tables();
  std::vector<PoissonCount> large;
  explicit CellPoisson(std::span<const std::uint64_t> count) {
    for (const std::uint64_t n : count)
      if (n > PoissonCount::inversion_limit) large.emplace_back(n);
  }
  // Cell of `n` rows; `next` the index of the next large cell's law. A cell
  // of no rows draws 0 without a uniform (as if it were not there).
  std::uint64_t draw(std::mt19937_64& gen, std::uint64_t n, std::size_t& next) const noexcept {
    if (n == 0) return 0;
    if (n <= PoissonCount::inversion_limit) return detail::draw_poisson_small(gen, n, tables);
    return large[next++].draw(gen);
  }
};

// One cell of the consistency band: its label law and its bin.
struct BandCell {
  BinomialCount law;
  std::uint32_t bin;
};

std::vector<Interval> band_of_cells(const std::vector<BandCell>& cells, const std::vector<double>& bin_weight,
                                    std::span<const double> forecast, std::span<const double> weight,
                                    const Binning& binning, const BootstrapOptions& options);

BootstrapInterval percentile_interval(std::vector<double> values, double confidence) {
  values.erase(std::remove_if(values.begin(), values.end(),
                              [](double v) { return !std::isfinite(v); }),
               values.end());
  BootstrapInterval out;
  out.used = values.size();
  if (values.empty()) {
    out.lo = out.hi = nan;
    return out;
  }
  std::sort(values.begin(), values.end());
  auto quantile = [&](double q) {
    const double h = static_cast<double>(values.size() - 1) * q;
    const auto k = static_cast<std::size_t>(std::floor(h));
    if (k + 1 >= values.size()) return values.back();
    return values[k] + (h - static_cast<double>(k)) * (values[k + 1] - values[k]);
  };
  out.lo = quantile(0.5 - 0.5 * confidence);
  out.hi = quantile(0.5 + 0.5 * confidence);
  return out;
}

// Runs body(r, scratch) for r in [0, replicates) on up to `threads` threads
// (0: one per core), each thread with its own scratch (a vector by default). Replicates are
// dealt in interleaved order; the first exception is rethrown.
template <class Scratch = std::vector<double>, class Body>
void for_each_replicate(std::size_t replicates, std::size_t threads, Body body) {
  if (threads == 0) threads = std::max(1u, std::thread::hardware_concurrency());
  threads = std::min(threads, replicates);
  if (threads <= 1) {
    Scratch scratch;
    for (std::size_t r = 0; r < replicates; ++r) body(r, scratch);
    return;
  }
  std::vector<std::exception_ptr> errors(threads);
  std::vector<std::thread> pool;
  for (std::size_t t = 0; t < threads; ++t)
    pool.emplace_back([&, t] {
      try {
        Scratch scratch;
        for (std::size_t r = t; r < replicates; r += threads) body(r, scratch);
      } catch (...) {
        errors[t] = std::current_exception();
      }
    });
  for (std::thread& th : pool) th.join();
  for (const std::exception_ptr& e : errors)
    if (e) std::rethrow_exception(e);
}

void check_options(const BootstrapOptions& options) {
  if (options.replicates == 0)
    throw Error(ErrorKind::usage, "the number of bootstrap replicates must be positive", {}, "0",
                "1 or more");
  if (!(options.confidence > 0.0 && options.confidence < 1.0))
    throw Error(ErrorKind::usage, "the confidence level must lie strictly between 0 and 1", {},
                std::to_string(options.confidence), "a value such as 0.95");
}

// CORP miscalibration of the Brier score for sorted rows.
double sorted_mcb_brier(std::span<const double> p, std::span<const double> y,
                        std::span<const double> w, double total) {
  const std::vector<PavBlock> blocks = pav_fit_sorted(p, y, w);
  double original = 0.0, recalibrated = 0.0;
  std::size_t j = 0;
  for (std::size_t i = 0; i < p.size(); ++i) {
    if (w[i] == 0.0) continue;
    while (j + 1 < blocks.size() && blocks[j].score_hi < p[i]) ++j;
    const double v = blocks[j].value;
    original += w[i] * (p[i] - y[i]) * (p[i] - y[i]);
    recalibrated += w[i] * (v - y[i]) * (v - y[i]);
  }
  return (original - recalibrated) / total;
}

}  // namespace

std::mt19937_64 bootstrap_generator(std::uint64_t seed, std::size_t replicate) {
  return replicate_generator(seed, replicate);
}

std::uint64_t poisson1_draw(std::mt19937_64& generator) {
  return detail::invert_poisson1(detail::poisson_tables().cdf[1], uniform01(generator));
}

std::uint64_t poisson1_of_bits(std::uint64_t bits) {
  return detail::invert_poisson1(detail::poisson_tables().cdf[1], static_cast<double>(bits >> 11) * 0x1p-53);
}

std::uint64_t poisson1_of_u32(std::uint32_t u) {
  return detail::invert_poisson1(detail::poisson_tables().cdf[1], static_cast<double>(u) * 0x1p-32);
}

BootstrapInterval bootstrap_percentile_interval(std::vector<double> values, double confidence) {
  return percentile_interval(std::move(values), confidence);
}

BootstrapResult bootstrap_metrics(std::span<const double> forecast,
                                  std::span<const double> label,
                                  std::span<const double> weight,
                                  const BootstrapOptions& options) {
  detail::check_metric_input("bootstrap_metrics", forecast, label, weight);
  check_options(options);
  return bootstrap_metrics(forecast, label, weight, options, make_forecast_cells(forecast, label, weight));
}

BootstrapResult bootstrap_metrics(std::span<const double> forecast,
                                  std::span<const double> label,
                                  std::span<const double> weight,
                                  const BootstrapOptions& options, const ForecastCells& forecast_cells) {
  detail::check_metric_input("bootstrap_metrics", forecast, label, weight);
  check_options(options);
  const std::size_t n = forecast.size();
  const std::vector<std::uint32_t>& order = forecast_cells.order;
  if (order.size() != n) throw Error(ErrorKind::internal, "bootstrap_metrics: the cells were made for other rows");
  // Cells in forecast order: without weights, the rows of one forecast and
  // label are one cell of `count` rows (a replicate draws its total weight
  // as one Poisson(count), the sum of their Poisson(1) counts); with
  // weights, every row is a cell of its own.
  const BootstrapCells c = bootstrap_cells(forecast, label, weight, forecast_cells);
  return bootstrap_metrics_of_cells(c.p, c.y, c.base, c.count, options);
}

BootstrapCells bootstrap_cells(std::span<const double> forecast, std::span<const double> label,
                               std::span<const double> weight, const ForecastCells& forecast_cells) {
  const std::size_t n = forecast.size();
  const std::vector<std::uint32_t>& order = forecast_cells.order;
  if (order.size() != n) throw Error(ErrorKind::internal, "bootstrap_cells: the cells were made for other rows");
  BootstrapCells out;
  std::vector<double>&p = out.p, &y = out.y, &base = out.base;
  std::vector<std::uint64_t>& count = out.count;
  if (weight.empty()) {
    for (std::size_t k = 0; k < n;) {
      const double f = forecast[order[k]];
      std::uint64_t tally[2] = {0, 0};
      for (; k < n && forecast[order[k]] == f; ++k) ++tally[label[order[k]] > 0.5 ? 1 : 0];
      for (int l = 0; l < 2; ++l) {
        if (tally[l] == 0) continue;
        p.push_back(f);
        y.push_back(l);
        base.push_back(1.0);
        count.push_back(tally[l]);
      }
    }
  } else {
    for (std::size_t k = 0; k < n; ++k) {
      p.push_back(forecast[order[k]]);
      y.push_back(label[order[k]]);
      base.push_back(weight[order[k]]);
      count.push_back(1);
    }
  }
  return out;
}

BootstrapResult bootstrap_metrics_of_cells(std::span<const double> p, std::span<const double> y,
                                           std::span<const double> base, std::span<const std::uint64_t> count,
                                           const BootstrapOptions& options) {
  check_options(options);
  const std::size_t cells = p.size();
  if (y.size() != cells || base.size() != cells || count.size() != cells)
    throw Error(ErrorKind::internal, "bootstrap_metrics: cell columns differ in length");

  const std::size_t R = options.replicates;
  std::vector<double> ece(R), l2(R), brier(R), mcb(R), area(R);
  // Replicate r writes only slot r of each vector and uses only its own
  // generator and buffers, so any split of r over threads gives the same
  // numbers.
  if (options.binning == BinningKind::equal_width) {
    // Equal-width bins are the cells' own, whatever the draw: one pass per
    // replicate draws the weights and takes every sum of the binning, the
    // AUC and PAV's per-forecast sums (each in cell order, as bin_sums,
    // auc_sorted and pav_fit_sorted add them), PAV runs over the distinct
    // forecasts, and a second pass takes the CORP sum.
    if (options.bins == 0)
      throw Error(ErrorKind::usage, "the number of bins must be positive", {}, "0", "1 or more");
    std::vector<std::uint32_t> bin(cells);
    for (std::size_t c = 0; c < cells; ++c) bin[c] = equal_width_bin(p[c], options.bins);
    // Cells [group[g], group[g + 1]) share one forecast.
    std::vector<std::size_t> group;
    for (std::size_t c = 0; c < cells; ++c)
      if (c == 0 || p[c] != p[c - 1]) group.push_back(c);
    const std::size_t groups = group.size();
    group.push_back(cells);
    struct Buffers {
      std::vector<double> w, score, wy, wsum;
      std::vector<BinSums> sums;
    };
    const CellPoisson poisson(count);
    for_each_replicate<Buffers>(R, options.threads, [&](std::size_t r, Buffers& buf) {
      buf.w.resize(cells);
      buf.score.resize(groups);
      buf.wy.resize(groups);
      buf.wsum.resize(groups);
      buf.sums.assign(options.bins, BinSums{});
      std::mt19937_64 gen = replicate_generator(options.seed, r);
      double total = 0.0, squared = 0.0;
      double negatives_below = 0.0, wins = 0.0, positives = 0.0;
      std::size_t large = 0;
      for (std::size_t g = 0; g < groups; ++g) {
        double pos = 0.0, neg = 0.0, wsum = 0.0;
        for (std::size_t c = group[g]; c < group[g + 1]; ++c) {
          const double t = static_cast<double>(poisson.draw(gen, count[c], large));
          const double wc = base[c] * t;
          // The sum of the rows' squared weights given the cell's total t:
          // each of the t draws falls on one of the cell's rows at random,
          // so its expectation is t + t(t - 1)/count (exact for a cell of
          // one row; for t <= 1 the correction is 0 and skipped).
          const double wc_sq = t > 1.0 ? base[c] * base[c] * (t + t * (t - 1.0) / static_cast<double>(count[c]))
                                       : base[c] * base[c] * t;
          buf.w[c] = wc;
          total += wc;
          squared += wc * (p[c] - y[c]) * (p[c] - y[c]);
          BinSums& s = buf.sums[bin[c]];
          s.weight += wc;
          s.weight_sq += wc_sq;
          s.forecast += wc * p[c];
          s.label += wc * y[c];
          pos += wc * y[c];
          neg += wc * (1.0 - y[c]);
          wsum += wc;
        }
        // Within a tie group every positive-negative pair counts one half.
        wins += pos * (negatives_below + 0.5 * neg);
        negatives_below += neg;
        positives += pos;
        buf.score[g] = p[group[g]];
        buf.wy[g] = pos;
        buf.wsum[g] = wsum;
      }
      if (!(total > 0.0)) {  // every row drawn zero times: no replicate
        ece[r] = l2[r] = brier[r] = mcb[r] = area[r] = nan;
        return;
      }
      const CalibrationError ce = calibration_error(buf.sums, BinningKind::equal_width);
      ece[r] = ce.ece;
      l2[r] = ce.l2_debiased;
      brier[r] = squared / total;
      // CORP miscalibration of the Brier score: the squared error before
      // (`squared`, the same sum) and after PAV's recalibration.
      const std::vector<PavBlock> blocks = pav_fit_cells(buf.score, buf.wy, buf.wsum);
      double recalibrated = 0.0;
      std::size_t j = 0;
      for (std::size_t c = 0; c < cells; ++c) {
        const double wc = buf.w[c];
        if (wc == 0.0) continue;
        while (j + 1 < blocks.size() && blocks[j].score_hi < p[c]) ++j;
        const double v = blocks[j].value;
        recalibrated += wc * (v - y[c]) * (v - y[c]);
      }
      mcb[r] = (squared - recalibrated) / total;
      area[r] = !(positives > 0.0) || !(negatives_below > 0.0) ? nan : wins / (positives * negatives_below);
    });
  } else {
    const CellPoisson poisson(count);
    for_each_replicate(R, options.threads, [&](std::size_t r, std::vector<double>& scratch) {
      scratch.resize(2 * cells);
      const std::span<double> w(scratch.data(), cells), w_sq(scratch.data() + cells, cells);
      std::mt19937_64 gen = replicate_generator(options.seed, r);
      double total = 0.0, squared = 0.0;
      std::size_t large = 0;
      for (std::size_t c = 0; c < cells; ++c) {
        const double t = static_cast<double>(poisson.draw(gen, count[c], large));
        w[c] = base[c] * t;
        // As above: the expected sum of the rows' squared weights.
        w_sq[c] = base[c] * base[c] * (t + t * (t - 1.0) / static_cast<double>(count[c]));
        total += w[c];
        squared += w[c] * (p[c] - y[c]) * (p[c] - y[c]);
      }
      if (!(total > 0.0)) {
        ece[r] = l2[r] = brier[r] = mcb[r] = area[r] = nan;
        return;
      }
      const Binning binning = make_binning_sorted(p, w, options.binning, options.bins);
      std::vector<BinSums> sums = bin_sums(p, y, w, binning);
      for (BinSums& b : sums) b.weight_sq = 0.0;
      for (std::size_t c = 0; c < cells; ++c) sums[binning.bin_of_row[c]].weight_sq += w_sq[c];
      const CalibrationError ce = calibration_error(sums, options.binning);
      ece[r] = ce.ece;
      l2[r] = ce.l2_debiased;
      brier[r] = squared / total;
      mcb[r] = sorted_mcb_brier(p, y, w, total);
      area[r] = auc_sorted(p, y, w);
    });
  }
  BootstrapResult out;
  out.ece = percentile_interval(std::move(ece), options.confidence);
  out.l2_debiased = percentile_interval(std::move(l2), options.confidence);
  out.brier = percentile_interval(std::move(brier), options.confidence);
  out.mcb_brier = percentile_interval(std::move(mcb), options.confidence);
  out.auc = percentile_interval(std::move(area), options.confidence);
  return out;
}

std::vector<Interval> consistency_band(std::span<const double> forecast,
                                       std::span<const double> weight,
                                       const Binning& binning,
                                       const BootstrapOptions& options) {
  return consistency_band(forecast, weight, binning, options,
                          weight.empty() ? make_forecast_cells(forecast, std::vector<double>(forecast.size(), 0.0), weight)
                                         : ForecastCells{});
}

std::vector<Interval> consistency_band(std::span<const double> forecast,
                                       std::span<const double> weight,
                                       const Binning& binning,
                                       const BootstrapOptions& options, const ForecastCells& forecast_cells) {
  check_options(options);
  const std::size_t n = forecast.size();
  if ((!weight.empty() && weight.size() != n) || binning.bin_of_row.size() != n)
    throw Error(ErrorKind::internal, "consistency_band: rows, weights and binning differ in length");
  const std::size_t bins = binning.bin_count;
  std::vector<double> bin_weight(bins, 0.0);
  for (std::size_t i = 0; i < n; ++i) bin_weight[binning.bin_of_row[i]] += detail::weight_at(weight, i);

  // Without weights, the rows of one forecast are one cell: its count of
  // positives is one Binomial(count, forecast) draw, the law of the sum of
  // its rows' Bernoulli labels. With weights every row is its own cell.
  std::vector<BandCell> cells;
  if (weight.empty()) {
    // One cell per distinct forecast, ascending (a forecast has one bin).
    if (forecast_cells.order.size() != n)
      throw Error(ErrorKind::internal, "consistency_band: the cells were made for other rows");
    cells.reserve(forecast_cells.size());
    for (std::size_t c = 0; c < forecast_cells.size(); ++c) {
      const std::size_t row = forecast_cells.order[forecast_cells.first[c]];
      cells.push_back({BinomialCount(forecast_cells.rows[c], forecast_cells.forecast[c]), binning.bin_of_row[row]});
    }
  }
  return band_of_cells(cells, bin_weight, forecast, weight, binning, options);
}

namespace {

std::vector<Interval> band_of_cells(const std::vector<BandCell>& cells, const std::vector<double>& bin_weight,
                                    std::span<const double> forecast, std::span<const double> weight,
                                    const Binning& binning, const BootstrapOptions& options) {
  const std::size_t bins = bin_weight.size(), n = forecast.size();

  const std::size_t R = options.replicates;
  std::vector<std::vector<double>> frequency(bins, std::vector<double>(R, nan));
  const std::uint64_t seed = options.seed ^ 0xC2B2AE3D27D4EB4Full;
  for_each_replicate(R, options.threads, [&](std::size_t r, std::vector<double>& positives) {
    std::mt19937_64 gen = replicate_generator(seed, r);
    positives.assign(bins, 0.0);
    if (weight.empty()) {
      for (const BandCell& c : cells) positives[c.bin] += static_cast<double>(c.law.draw(gen));
    } else {
      for (std::size_t i = 0; i < n; ++i)
        if (uniform01(gen) < forecast[i]) positives[binning.bin_of_row[i]] += weight[i];
    }
    for (std::size_t b = 0; b < bins; ++b)
      if (bin_weight[b] > 0.0) frequency[b][r] = positives[b] / bin_weight[b];
  });
  std::vector<Interval> band(bins);
  for (std::size_t b = 0; b < bins; ++b) {
    const BootstrapInterval q = percentile_interval(std::move(frequency[b]), options.confidence);
    band[b] = {q.lo, q.hi};
  }
  return band;
}

}  // namespace

std::vector<Interval> consistency_band_of_cells(std::span<const double> forecast,
                                                std::span<const std::uint64_t> count,
                                                std::span<const std::uint32_t> bin,
                                                std::span<const double> bin_weight,
                                                const BootstrapOptions& options) {
  check_options(options);
  if (count.size() != forecast.size() || bin.size() != forecast.size())
    throw Error(ErrorKind::internal, "consistency_band: cell columns differ in length");
  std::vector<BandCell> cells;
  cells.reserve(forecast.size());
  for (std::size_t c = 0; c < forecast.size(); ++c) cells.push_back({BinomialCount(count[c], forecast[c]), bin[c]});
  Binning none;
  none.bin_count = bin_weight.size();
  return band_of_cells(cells, std::vector<double>(bin_weight.begin(), bin_weight.end()), {}, {}, none, options);
}

}  // namespace plumb
