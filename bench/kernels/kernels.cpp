// Kernel benchmarks of plumb's core: PAV, the parametric fits, the report's
// binning, the bootstrap and the map lookup that `apply` does per row.
//
//   build-bench/bench/kernels/plumb_kernels --benchmark_min_time=0.2
//
// Inputs are generated from fixed seeds with std::mt19937_64 (whose output
// the C++ standard fixes) and no standard-library distribution, so every
// run on every machine sees the same rows. Rows follow the model of
// bench/make_rows.py: z uniform on [-3.5, 1.5], score sigmoid(1.8 z),
// label Bernoulli(sigmoid(z)). Scores are rounded to four decimals, so
// there are at most 10^4 distinct scores and larger inputs are mostly ties,
// as scores written with few digits are.
#include <benchmark/benchmark.h>

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <map>
#include <memory>
#include <numeric>
#include <random>
#include <string>
#include <vector>

#include "plumb/binning.hpp"
#include "plumb/bootstrap.hpp"
#include "plumb/calibration_map.hpp"
#include "plumb/class_report.hpp"
#include "plumb/pav.hpp"
#include "plumb/scale.hpp"

namespace {

struct Rows {
  std::vector<double> score;
  std::vector<double> label;
};

constexpr std::uint64_t rows_seed = 20261202;
constexpr std::uint64_t lookup_seed = 7;

Rows generate(std::size_t n, std::uint64_t seed, double digits) {
  std::mt19937_64 bits(seed);
  auto uniform = [&bits] { return static_cast<double>(bits() >> 11) * 0x1.0p-53; };
  Rows r;
  r.score.resize(n);
  r.label.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    const double z = uniform() * 5.0 - 3.5;
    r.score[i] = std::round(plumb::sigmoid(1.8 * z) * digits) / digits;
    r.label[i] = uniform() < plumb::sigmoid(z) ? 1.0 : 0.0;
  }
  return r;
}

// The rows of size n in generation order, made once per size.
const Rows& rows_of(std::size_t n) {
  static std::map<std::size_t, Rows> cache;
  auto it = cache.find(n);
  if (it == cache.end()) it = cache.emplace(n, generate(n, rows_seed, 1e4)).first;
  return it->second;
}

// The same rows sorted by score (stable, so ties keep their order).
const Rows& sorted_rows_of(std::size_t n) {
  static std::map<std::size_t, Rows> cache;
  auto it = cache.find(n);
  if (it == cache.end()) {
    const Rows& r = rows_of(n);
    std::vector<std::size_t> order(n);
    std::iota(order.begin(), order.end(), std::size_t{0});
    std::stable_sort(order.begin(), order.end(),
                     [&r](std::size_t a, std::size_t b) { return r.score[a] < r.score[b]; });
    Rows s;
    s.score.reserve(n);
    s.label.reserve(n);
    for (std::size_t i : order) {
      s.score.push_back(r.score[i]);
      s.label.push_back(r.label[i]);
    }
    it = cache.emplace(n, std::move(s)).first;
  }
  return it->second;
}

plumb::FitData fit_data(const Rows& r) {
  return plumb::FitData{r.score, r.label, {}, plumb::Scale::probability};
}

void count_rows(benchmark::State& state, std::size_t rows_per_iteration) {
  state.SetItemsProcessed(static_cast<std::int64_t>(state.iterations()) *
                          static_cast<std::int64_t>(rows_per_iteration));
}

// --- PAV -------------------------------------------------------------------

// Rows in random order: pav_fit sorts (stable, through an index) first.
void BM_pav_fit_unsorted(benchmark::State& state) {
  const Rows& r = rows_of(static_cast<std::size_t>(state.range(0)));
  for (auto _ : state) benchmark::DoNotOptimize(plumb::pav_fit(r.score, r.label));
  count_rows(state, r.score.size());
}
BENCHMARK(BM_pav_fit_unsorted)->RangeMultiplier(10)->Range(10'000, 1'000'000)->Unit(benchmark::kMillisecond);

// Rows already in score order: pav_fit sees it and skips the sort.
void BM_pav_fit_presorted(benchmark::State& state) {
  const Rows& r = sorted_rows_of(static_cast<std::size_t>(state.range(0)));
  for (auto _ : state) benchmark::DoNotOptimize(plumb::pav_fit(r.score, r.label));
  count_rows(state, r.score.size());
}
BENCHMARK(BM_pav_fit_presorted)->RangeMultiplier(10)->Range(10'000, 1'000'000)->Unit(benchmark::kMillisecond);

// The pooling pass alone (cross-fitting and the bootstrap call this).
void BM_pav_fit_sorted(benchmark::State& state) {
  const Rows& r = sorted_rows_of(static_cast<std::size_t>(state.range(0)));
  for (auto _ : state) benchmark::DoNotOptimize(plumb::pav_fit_sorted(r.score, r.label));
  count_rows(state, r.score.size());
}
BENCHMARK(BM_pav_fit_sorted)->RangeMultiplier(10)->Range(10'000, 1'000'000)->Unit(benchmark::kMillisecond);

// --- fitting maps ----------------------------------------------------------

// Merging rows by distinct score, the first step of every parametric fit.
void BM_tally_by_score(benchmark::State& state) {
  const Rows& r = rows_of(static_cast<std::size_t>(state.range(0)));
  const plumb::FitData data = fit_data(r);
  for (auto _ : state) benchmark::DoNotOptimize(plumb::tally_by_score(data));
  count_rows(state, r.score.size());
}
BENCHMARK(BM_tally_by_score)->Arg(100'000)->Arg(1'000'000)->Unit(benchmark::kMillisecond);

// fit_map as `plumb fit` calls it after reading: the tally, then the fit
// (Newton iterations over the distinct scores for platt and beta).
void BM_fit_map(benchmark::State& state, const char* kind) {
  const Rows& r = rows_of(static_cast<std::size_t>(state.range(0)));
  const plumb::FitData data = fit_data(r);
  for (auto _ : state) benchmark::DoNotOptimize(plumb::fit_map(kind, data));
  count_rows(state, r.score.size());
}
BENCHMARK_CAPTURE(BM_fit_map, platt, "platt")->Arg(100'000)->Arg(1'000'000)->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(BM_fit_map, beta, "beta")->Arg(100'000)->Arg(1'000'000)->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(BM_fit_map, isotonic, "isotonic")->Arg(100'000)->Arg(1'000'000)->Unit(benchmark::kMillisecond);

// --- the report's binning --------------------------------------------------

void BM_make_binning(benchmark::State& state, plumb::BinningKind kind) {
  const Rows& r = rows_of(static_cast<std::size_t>(state.range(0)));
  for (auto _ : state) benchmark::DoNotOptimize(plumb::make_binning(r.score, {}, kind, 10));
  count_rows(state, r.score.size());
}
BENCHMARK_CAPTURE(BM_make_binning, equal_width, plumb::BinningKind::equal_width)
    ->Arg(100'000)->Arg(1'000'000)->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(BM_make_binning, equal_mass, plumb::BinningKind::equal_mass)
    ->Arg(100'000)->Arg(1'000'000)->Unit(benchmark::kMillisecond);

// Equal-mass bins of rows already sorted (what every bootstrap replicate does).
void BM_make_binning_sorted_mass(benchmark::State& state) {
  const Rows& r = sorted_rows_of(static_cast<std::size_t>(state.range(0)));
  for (auto _ : state)
    benchmark::DoNotOptimize(plumb::make_binning_sorted(r.score, {}, plumb::BinningKind::equal_mass, 10));
  count_rows(state, r.score.size());
}
BENCHMARK(BM_make_binning_sorted_mass)->Arg(100'000)->Arg(1'000'000)->Unit(benchmark::kMillisecond);

void BM_bin_sums(benchmark::State& state) {
  const Rows& r = rows_of(static_cast<std::size_t>(state.range(0)));
  const plumb::Binning binning = plumb::make_binning(r.score, {}, plumb::BinningKind::equal_width, 10);
  for (auto _ : state) benchmark::DoNotOptimize(plumb::bin_sums(r.score, r.label, {}, binning));
  count_rows(state, r.score.size());
}
BENCHMARK(BM_bin_sums)->Arg(100'000)->Arg(1'000'000)->Unit(benchmark::kMillisecond);

// --- the bootstrap ---------------------------------------------------------

// A few replicates on one thread; items are rows times replicates, so
// items_per_second is the replicate throughput per row.
void BM_bootstrap_metrics(benchmark::State& state) {
  const Rows& r = rows_of(static_cast<std::size_t>(state.range(0)));
  plumb::BootstrapOptions options;
  options.replicates = static_cast<std::size_t>(state.range(1));
  options.threads = 1;
  for (auto _ : state) benchmark::DoNotOptimize(plumb::bootstrap_metrics(r.score, r.label, {}, options));
  count_rows(state, r.score.size() * options.replicates);
}
BENCHMARK(BM_bootstrap_metrics)->Args({100'000, 4})->Unit(benchmark::kMillisecond);

// --- the map lookup (apply's per-row work, without the CSV) ----------------

// A map fitted on 10^6 rows, looked up at 10^6 other scores in random order
// written with six decimals (so most fall between the fitted scores),
// through the CalibrationMap interface as `apply` calls it.
void BM_map_lookup(benchmark::State& state, const char* kind) {
  const auto n = static_cast<std::size_t>(state.range(0));
  const std::unique_ptr<plumb::CalibrationMap> map = plumb::fit_map(kind, fit_data(rows_of(1'000'000)));
  const plumb::CalibrationMap& m = *map;
  const std::vector<double> scores = generate(n, lookup_seed, 1e6).score;
  for (auto _ : state) {
    double sum = 0.0;
    for (double s : scores) sum += m.map(s).probability;
    benchmark::DoNotOptimize(sum);
  }
  count_rows(state, n);
}
BENCHMARK_CAPTURE(BM_map_lookup, isotonic, "isotonic")->Arg(1'000'000)->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(BM_map_lookup, platt, "platt")->Arg(1'000'000)->Unit(benchmark::kMillisecond);

// The multi-class report (class_report.hpp) of n rows x 4 classes: logits
// z_k uniform on [-2, 2], scores softmax(1.6 z) (over-confident), labels
// drawn from softmax(z); probabilities rounded to four decimals. Arg 1 is
// the bootstrap's replicates (0: the figures alone), on two threads.
void BM_class_report(benchmark::State& state) {
  const auto n = static_cast<std::size_t>(state.range(0));
  constexpr std::size_t K = 4;
  std::mt19937_64 bits(rows_seed);
  auto uniform = [&bits] { return static_cast<double>(bits() >> 11) * 0x1.0p-53; };
  plumb::ClassScores s;
  s.classes = {"on_time", "late", "lost", "returned"};
  s.rows = n;
  s.values.reserve(n * K);
  for (std::size_t i = 0; i < n; ++i) {
    double z[K], e[K], t[K], sum = 0.0, tsum = 0.0;
    for (std::size_t k = 0; k < K; ++k) {
      z[k] = uniform() * 4.0 - 2.0;
      sum += e[k] = std::exp(1.6 * z[k]);
      tsum += t[k] = std::exp(z[k]);
    }
    for (std::size_t k = 0; k < K; ++k) s.values.push_back(std::round(e[k] / sum * 1e4) / 1e4);
    double u = uniform() * tsum;
    std::uint32_t y = 0;
    while (y + 1 < K && u >= t[y]) u -= t[y++];
    s.label.push_back(y);
  }
  plumb::ClassReportOptions o;
  o.bootstrap = static_cast<std::size_t>(state.range(1));
  o.threads = 2;
  for (auto _ : state) benchmark::DoNotOptimize(plumb::build_class_report(s, o).brier);
  count_rows(state, n);
}
BENCHMARK(BM_class_report)->Args({1'000'000, 0})->Args({1'000'000, 200})->Unit(benchmark::kMillisecond);

}  // namespace
