#include "plumb/drift.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <numeric>
#include <random>

#include "plumb/calibration_error.hpp"
#include "plumb/corp.hpp"
#include "plumb/error.hpp"
#include "plumb/scores.hpp"
#include "plumb/tally.hpp"

namespace plumb {

namespace {

constexpr double index_limit = 4503599627370496.0;  // 2^52

// A cell in score order: the probability scale's 0 and 1 cells sit at -inf
// and +inf of the index.
struct OrderedCell {
  double key = 0.0;
  double score = 0.0;
  std::uint64_t count = 0, positive = 0;
};

std::vector<OrderedCell> ordered(const GridCells& g) {
  std::vector<OrderedCell> out;
  out.reserve(g.index.size() + 2);
  const double inf = std::numeric_limits<double>::infinity();
  if (g.zero_count > 0) out.push_back({-inf, 0.0, g.zero_count, g.zero_positive});
  for (std::size_t i = 0; i < g.index.size(); ++i)
    out.push_back({static_cast<double>(g.index[i]), grid_score(g.index[i], g.scale, g.step), g.count[i], g.positive[i]});
  if (g.one_count > 0) out.push_back({inf, 1.0, g.one_count, g.one_positive});
  return out;
}

// The labelled figures of one side from its cells' forecasts and row weights
// (two weighted rows per cell: its negatives and its positives).
struct SideFigures {
  double base_rate, log_loss, brier, ece, mcb;
};

struct SideRows {
  std::vector<double> forecast, label, weight;
};

SideRows side_rows(const std::vector<OrderedCell>& cells, const std::vector<double>& forecast) {
  SideRows s;
  s.forecast.reserve(2 * cells.size());
  for (std::size_t c = 0; c < cells.size(); ++c) {
    s.forecast.insert(s.forecast.end(), {forecast[c], forecast[c]});
    s.label.insert(s.label.end(), {0.0, 1.0});
    s.weight.insert(s.weight.end(),
                    {static_cast<double>(cells[c].count - cells[c].positive), static_cast<double>(cells[c].positive)});
  }
  return s;
}

SideFigures figures_of(const SideRows& s, std::span<const double> weight, std::size_t ece_bins) {
  double total = 0.0, positives = 0.0;
  for (std::size_t i = 0; i < weight.size(); ++i) {
    total += weight[i];
    positives += weight[i] * s.label[i];
  }
  SideFigures f;
  f.base_rate = positives / total;
  f.log_loss = log_loss(s.forecast, s.label, weight);
  f.brier = brier_score(s.forecast, s.label, weight);
  f.ece = calibration_error(s.forecast, s.label, weight, BinningKind::equal_width, ece_bins).ece;
  f.mcb = corp_decomposition(s.forecast, s.label, weight).brier.mcb;
  return f;
}

double side_total(std::span<const double> w) { return std::accumulate(w.begin(), w.end(), 0.0); }

}  // namespace

std::uint64_t GridCells::rows() const noexcept {
  return std::accumulate(count.begin(), count.end(), std::uint64_t{0}) + zero_count + one_count;
}

std::uint64_t GridCells::positives() const noexcept {
  return std::accumulate(positive.begin(), positive.end(), std::uint64_t{0}) + zero_positive + one_positive;
}

namespace {

std::int64_t nearest_cell(double z, double step) noexcept {
  const double q = std::nearbyint(z / step);
  return static_cast<std::int64_t>(std::clamp(q, -index_limit, index_limit));
}

// Buckets of probabilities by their leading bits: the biased exponents
// from bucket_exponent_low to 1022 (p in [2^-30, 1)), 12 bits of mantissa.
constexpr int bucket_mantissa_bits = 12;
constexpr std::uint64_t bucket_exponent_low = 1022 - 29;
constexpr std::size_t bucket_count = std::size_t{30} << bucket_mantissa_bits;

std::uint64_t bits_of(double x) noexcept {
  std::uint64_t b;
  std::memcpy(&b, &x, sizeof b);
  return b;
}
double double_of(std::uint64_t b) noexcept {
  double x;
  std::memcpy(&x, &b, sizeof x);
  return x;
}

}  // namespace

GridIndexer::GridIndexer(Scale scale, double step) : scale_(scale), step_(step) {
  if (scale != Scale::probability || !(step >= min_table_step)) return;
  // Every p in (0, 1) has log-odds within [-745, 37]: cells a little wider.
  first_ = static_cast<std::int64_t>(std::floor(-746.0 / step));
  const std::int64_t last = static_cast<std::int64_t>(std::ceil(38.0 / step));
  boundary_.resize(static_cast<std::size_t>(last - first_ + 1));
  double prev = 0.0;
  for (std::size_t i = 0; i < boundary_.size(); ++i) {
    const double b = sigmoid((static_cast<double>(first_ + static_cast<std::int64_t>(i)) + 0.5) * step);
    prev = std::max(prev, b);
    boundary_[i] = prev;
  }
  boundary_.back() = 1.0;  // every p < 1 lies at or below the last boundary
  auto position = [&](double p) {
    return static_cast<std::uint32_t>(std::lower_bound(boundary_.begin(), boundary_.end(), p) - boundary_.begin());
  };
  lo_.resize(bucket_count);
  hi_.resize(bucket_count);
  const int shift = 52 - bucket_mantissa_bits;
  for (std::size_t b = 0; b < bucket_count; ++b) {
    const std::uint64_t low_bits = ((bucket_exponent_low << bucket_mantissa_bits) + b) << shift;
    const double low = double_of(low_bits);
    const double high = double_of(low_bits + (std::uint64_t{1} << shift) - 1);
    lo_[b] = position(low);
    hi_[b] = position(high);
  }
}

std::int64_t GridIndexer::by_table(double p) const noexcept {
  const std::uint64_t bits = bits_of(p);
  const std::uint64_t exponent = bits >> 52;
  std::size_t lo = 0, hi = boundary_.size() - 1;
  if (exponent >= bucket_exponent_low) {
    const std::size_t b = static_cast<std::size_t>((bits >> (52 - bucket_mantissa_bits)) -
                                                   (bucket_exponent_low << bucket_mantissa_bits));
    lo = lo_[b];
    hi = hi_[b];
  }
  // The least position in [lo, hi] whose boundary is >= p.
  while (lo < hi) {
    const std::size_t mid = lo + (hi - lo) / 2;
    if (boundary_[mid] < p) lo = mid + 1;
    else hi = mid;
  }
  return first_ + static_cast<std::int64_t>(lo);
}

std::int64_t GridIndexer::operator()(double score) const noexcept {
  if (scale_ != Scale::probability) return nearest_cell(score, step_);
  if (!boundary_.empty()) return by_table(score);
  return nearest_cell(std::log(score) - std::log1p(-score), step_);
}

std::int64_t grid_index(double score, Scale scale, double step) { return GridIndexer(scale, step)(score); }

double grid_score(std::int64_t k, Scale scale, double step) noexcept {
  const double z = step * static_cast<double>(k);
  return scale == Scale::probability ? sigmoid(z) : z;
}

GridCounter::GridCounter(Scale scale, double step, bool labelled)
    : index_(scale, step), scale_(scale), step_(step), labelled_(labelled) {}

void GridCounter::grow(std::int64_t k) {
  if (counts_.empty()) {
    first_ = k;
    counts_.assign(1, 0);
    positives_.assign(1, 0);
    return;
  }
  const std::int64_t last = first_ + static_cast<std::int64_t>(counts_.size()) - 1;
  const std::int64_t lo = std::min(first_, k), hi = std::max(last, k);
  // Differences of clamped indices fit in 64 bits (both lie within 2^52).
  if (static_cast<std::uint64_t>(hi - lo) + 1 > max_grid_cells)
    throw Error(ErrorKind::input,
                "the scores span more than " + std::to_string(max_grid_cells) + " cells of the drift grid", {}, {},
                "scores within about 2^22 grid steps of each other");
  // Grow by at least the current size on the side that needs it, so that
  // a slow drift of the range costs amortised constant time.
  const std::int64_t size = static_cast<std::int64_t>(counts_.size());
  std::int64_t new_lo = lo, new_hi = hi;
  if (lo < first_) new_lo = std::min(lo, first_ - size);
  if (hi > last) new_hi = std::max(hi, last + size);
  if (static_cast<std::uint64_t>(new_hi - new_lo) + 1 > max_grid_cells) new_lo = lo, new_hi = hi;
  std::vector<std::uint64_t> c(static_cast<std::size_t>(new_hi - new_lo + 1), 0), p(c.size(), 0);
  std::copy(counts_.begin(), counts_.end(), c.begin() + (first_ - new_lo));
  std::copy(positives_.begin(), positives_.end(), p.begin() + (first_ - new_lo));
  counts_ = std::move(c);
  positives_ = std::move(p);
  first_ = new_lo;
}

void GridCounter::add(double score, bool positive) { add_cell(score, 1, positive ? 1 : 0); }

void GridCounter::add_cell(double score, std::uint64_t count, std::uint64_t positive) {
  if (!labelled_) positive = 0;
  if (scale_ == Scale::probability && !(score > 0.0 && score < 1.0)) {
    if (score <= 0.0) {
      zero_count_ += count;
      zero_positive_ += positive;
    } else {
      one_count_ += count;
      one_positive_ += positive;
    }
    return;
  }
  const std::int64_t k = index_(score);
  if (counts_.empty() || k < first_ || k >= first_ + static_cast<std::int64_t>(counts_.size())) grow(k);
  const std::size_t at = static_cast<std::size_t>(k - first_);
  counts_[at] += count;
  positives_[at] += positive;
}

GridCells GridCounter::finish() const {
  GridCells g;
  g.scale = scale_;
  g.step = step_;
  g.labelled = labelled_;
  for (std::size_t i = 0; i < counts_.size(); ++i) {
    if (counts_[i] == 0) continue;
    g.index.push_back(first_ + static_cast<std::int64_t>(i));
    g.count.push_back(counts_[i]);
    g.positive.push_back(positives_[i]);
  }
  g.zero_count = zero_count_;
  g.zero_positive = zero_positive_;
  g.one_count = one_count_;
  g.one_positive = one_positive_;
  return g;
}

double population_stability_index(std::span<const std::uint64_t> tonight, std::span<const std::uint64_t> reference) {
  if (tonight.size() != reference.size()) throw Error(ErrorKind::internal, "PSI of bins of different lengths");
  const double n = static_cast<double>(std::accumulate(tonight.begin(), tonight.end(), std::uint64_t{0}));
  const double m = static_cast<double>(std::accumulate(reference.begin(), reference.end(), std::uint64_t{0}));
  if (!(n > 0.0 && m > 0.0)) throw Error(ErrorKind::internal, "PSI of a side without rows");
  double psi = 0.0;
  for (std::size_t b = 0; b < tonight.size(); ++b) {
    const double a = std::max(static_cast<double>(tonight[b]), 0.5) / n;
    const double r = std::max(static_cast<double>(reference[b]), 0.5) / m;
    psi += (a - r) * std::log(a / r);
  }
  return psi;
}

double kolmogorov_upper_tail(double x) noexcept {
  if (!(x > 0.0)) return 1.0;
  constexpr double pi = 3.14159265358979323846;
  if (x < 1.0) {
    // K(x) = sqrt(2 pi) / x * sum_k exp(-(2k - 1)^2 pi^2 / (8 x^2))
    const double w = std::log(x);
    const double z = -(pi * pi / 8.0) / (x * x);
    double s = 0.0;
    for (int k = 1; k < 1000; k += 2) {
      const double term = std::exp(k * k * z - w);
      s += term;
      if (term < 1e-17 * s) break;
    }
    const double cdf = s * std::sqrt(2.0 * pi);
    return std::clamp(1.0 - cdf, 0.0, 1.0);
  }
  // The tail itself, 2 sum_k (-1)^(k-1) exp(-2 k^2 x^2), summed without
  // taking it from 1 (R's 1 - K(x) loses every digit below 1e-16).
  const double z = -2.0 * x * x;
  double sign = 1.0, tail = 0.0;
  for (int k = 1; k < 1000; ++k) {
    const double term = 2.0 * std::exp(z * k * k);
    tail += sign * term;
    sign = -sign;
    if (term <= 1e-17 * tail) break;
  }
  return std::clamp(tail, 0.0, 1.0);
}

KsResult ks_two_sample(const GridCells& tonight, const GridCells& reference) {
  const std::vector<OrderedCell> a = ordered(tonight), b = ordered(reference);
  const double n = static_cast<double>(tonight.rows()), m = static_cast<double>(reference.rows());
  if (!(n > 0.0 && m > 0.0)) throw Error(ErrorKind::internal, "KS of a side without rows");
  KsResult r;
  std::uint64_t ca = 0, cb = 0;
  std::size_t i = 0, j = 0;
  while (i < a.size() || j < b.size()) {
    double key;
    if (j >= b.size() || (i < a.size() && a[i].key < b[j].key)) key = a[i].key;
    else key = b[j].key;
    while (i < a.size() && a[i].key == key) ca += a[i++].count;
    while (j < b.size() && b[j].key == key) cb += b[j++].count;
    r.statistic = std::max(r.statistic, std::fabs(static_cast<double>(ca) / n - static_cast<double>(cb) / m));
  }
  r.p_value = kolmogorov_upper_tail(std::sqrt(n * m / (n + m)) * r.statistic);
  return r;
}

namespace {
constexpr GateMetric drift_gates[] = {
    {"psi", true, false, "the population stability index over the map's bins"},
    {"ks", true, false, "the Kolmogorov-Smirnov statistic of the two samples of scores"},
    {"outside_share", true, false, "the share of tonight's rows outside the fitted score range"},
    {"log_loss_change", true, false, "tonight's log loss minus the reference's"},
    {"brier_change", true, false, "tonight's Brier score minus the reference's"},
    {"ece_change", true, false, "tonight's ECE minus the reference's"},
    {"mcb_change", true, false, "tonight's MCB minus the reference's"},
    {"base_rate_change", true, true, "tonight's base rate minus the reference's (signed)"},
    {"mean_forecast_change", true, true, "tonight's mean mapped probability minus the reference's (signed)"},
    {"ks_p", false, true, "the Kolmogorov-Smirnov p-value (asymptotic)"},
};
}  // namespace

std::span<const GateMetric> drift_gate_metrics() noexcept { return drift_gates; }

const GateMetric* find_drift_gate_metric(std::string_view name) noexcept {
  for (const GateMetric& m : drift_gates)
    if (m.name == name) return &m;
  return nullptr;
}

double drift_gate_value(const DriftResult& r, std::string_view metric) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  if (metric == "psi") return r.psi;
  if (metric == "ks") return r.ks.statistic;
  if (metric == "ks_p") return r.ks.p_value;
  if (metric == "outside_share")
    return r.tonight_rows > 0 ? static_cast<double>(r.outside_rows) / static_cast<double>(r.tonight_rows) : nan;
  if (metric == "mean_forecast_change") return r.mean_forecast_tonight - r.mean_forecast_reference;
  if (!r.labelled) return nan;
  if (metric == "log_loss_change") return r.log_loss.difference;
  if (metric == "brier_change") return r.brier.difference;
  if (metric == "ece_change") return r.ece.difference;
  if (metric == "mcb_change") return r.mcb.difference;
  if (metric == "base_rate_change") return r.base_rate.difference;
  throw Error(ErrorKind::internal, "unknown drift gate metric", {}, std::string(metric));
}

GateResult check_drift_gate(const Gate& gate, const DriftResult& r) {
  GateResult g;
  g.gate = gate;
  g.value = drift_gate_value(r, gate.metric);
  g.exceeded = !std::isfinite(g.value) || (gate.bound == GateBound::max ? g.value > gate.limit : g.value < gate.limit);
  return g;
}

GridCells reference_from_tally(const Tally& t, double step) {
  GridCounter counter(t.scale, step, true);
  for (std::size_t i = 0; i < t.score.size(); ++i)
    counter.add_cell(t.score[i], t.count[i], static_cast<std::uint64_t>(std::llround(t.positive[i])));
  return counter.finish();
}

BootstrapInterval percentile_interval(std::vector<double> values, double confidence) {
  std::erase_if(values, [](double v) { return std::isnan(v); });
  BootstrapInterval out;
  out.used = values.size();
  if (values.empty()) {
    out.lo = out.hi = std::numeric_limits<double>::quiet_NaN();
    return out;
  }
  std::sort(values.begin(), values.end());
  auto quantile = [&](double p) {
    const double h = (static_cast<double>(values.size()) - 1.0) * p;
    const std::size_t lo = static_cast<std::size_t>(std::floor(h));
    const std::size_t hi = std::min(lo + 1, values.size() - 1);
    return values[lo] + (h - static_cast<double>(lo)) * (values[hi] - values[lo]);
  };
  out.lo = quantile((1.0 - confidence) / 2.0);
  out.hi = quantile((1.0 + confidence) / 2.0);
  return out;
}

DriftResult compute_drift(const GridCells& reference, const GridCells& tonight, const CalibrationMap& map,
                          const DriftOptions& options) {
  DriftResult r;
  r.reference_rows = reference.rows();
  r.tonight_rows = tonight.rows();
  if (r.reference_rows == 0) throw Error(ErrorKind::input, "the reference has no rows", {}, {}, "at least one row");
  if (r.tonight_rows == 0) throw Error(ErrorKind::input, "tonight's input has no rows", {}, {}, "at least one row");
  if (options.bins == 0) throw Error(ErrorKind::usage, "drift needs at least one bin");
  const std::vector<OrderedCell> ref = ordered(reference), now = ordered(tonight);
  std::vector<double> ref_f(ref.size()), now_f(now.size());
  for (std::size_t c = 0; c < ref.size(); ++c) ref_f[c] = map(ref[c].score);
  for (std::size_t c = 0; c < now.size(); ++c) now_f[c] = map(now[c].score);

  // The map's pieces joined into at most `bins` bins of about equal mass.
  const double total = static_cast<double>(r.reference_rows);
  std::vector<std::size_t> last_cell;  // per bin, its last reference cell
  std::uint64_t so_far = 0;
  std::size_t closed = 0;
  for (std::size_t c = 0; c < ref.size(); ++c) {
    so_far += ref[c].count;
    const bool piece_ends = c + 1 == ref.size() || ref_f[c + 1] != ref_f[c];
    if (!piece_ends) continue;
    const double need = total * static_cast<double>(closed + 1) / static_cast<double>(options.bins);
    if (static_cast<double>(so_far) >= need || c + 1 == ref.size()) {
      last_cell.push_back(c);
      while (closed < options.bins && static_cast<double>(so_far) >= total * static_cast<double>(closed + 1) /
                                                                      static_cast<double>(options.bins))
        ++closed;
    }
  }
  std::vector<std::uint64_t> ref_counts(last_cell.size(), 0), now_counts(last_cell.size(), 0);
  r.bins.resize(last_cell.size());
  std::size_t first = 0;
  for (std::size_t b = 0; b < last_cell.size(); ++b) {
    for (std::size_t c = first; c <= last_cell[b]; ++c) ref_counts[b] += ref[c].count;
    r.bins[b].score_lo = ref[first].score;
    r.bins[b].score_hi = ref[last_cell[b]].score;
    first = last_cell[b] + 1;
  }
  {
    std::size_t b = 0;
    for (const OrderedCell& c : now) {
      while (b + 1 < last_cell.size() && c.key > ref[last_cell[b]].key) ++b;
      now_counts[b] += c.count;
    }
  }
  r.psi = population_stability_index(now_counts, ref_counts);
  const double n = static_cast<double>(r.tonight_rows), m = total;
  for (std::size_t b = 0; b < r.bins.size(); ++b) {
    r.bins[b].reference = ref_counts[b];
    r.bins[b].tonight = now_counts[b];
    const double a = std::max(static_cast<double>(now_counts[b]), 0.5) / n;
    const double q = std::max(static_cast<double>(ref_counts[b]), 0.5) / m;
    r.bins[b].term = (a - q) * std::log(a / q);
  }
  r.ks = ks_two_sample(tonight, reference);
  double sref = 0.0, snow = 0.0;
  for (std::size_t c = 0; c < ref.size(); ++c) sref += static_cast<double>(ref[c].count) * ref_f[c];
  for (std::size_t c = 0; c < now.size(); ++c) snow += static_cast<double>(now[c].count) * now_f[c];
  r.mean_forecast_reference = sref / m;
  r.mean_forecast_tonight = snow / n;

  r.labelled = reference.labelled && tonight.labelled;
  if (!r.labelled) return r;
  const SideRows rs = side_rows(ref, ref_f), ns = side_rows(now, now_f);
  const SideFigures fr = figures_of(rs, rs.weight, options.ece_bins);
  const SideFigures fn = figures_of(ns, ns.weight, options.ece_bins);
  auto set = [](DriftFigure& f, double a, double b) {
    f.reference = a;
    f.tonight = b;
    f.difference = b - a;
  };
  set(r.base_rate, fr.base_rate, fn.base_rate);
  set(r.log_loss, fr.log_loss, fn.log_loss);
  set(r.brier, fr.brier, fn.brier);
  set(r.ece, fr.ece, fn.ece);
  set(r.mcb, fr.mcb, fn.mcb);
  if (options.bootstrap == 0) return r;

  std::vector<double> d_base, d_ll, d_brier, d_ece, d_mcb;
  std::vector<double> wr(rs.weight.size()), wn(ns.weight.size());
  for (std::size_t rep = 0; rep < options.bootstrap; ++rep) {
    std::mt19937_64 gen(options.seed + rep);
    auto draw = [&gen](const std::vector<double>& base, std::vector<double>& out) {
      for (std::size_t i = 0; i < base.size(); ++i) {
        if (base[i] <= 0.0) {
          out[i] = 0.0;
          continue;
        }
        std::poisson_distribution<std::uint64_t> poisson(base[i]);
        out[i] = static_cast<double>(poisson(gen));
      }
    };
    draw(rs.weight, wr);
    draw(ns.weight, wn);
    const double nan = std::numeric_limits<double>::quiet_NaN();
    if (!(side_total(wr) > 0.0 && side_total(wn) > 0.0)) {
      for (auto* v : {&d_base, &d_ll, &d_brier, &d_ece, &d_mcb}) v->push_back(nan);
      continue;
    }
    const SideFigures a = figures_of(rs, wr, options.ece_bins), b = figures_of(ns, wn, options.ece_bins);
    d_base.push_back(b.base_rate - a.base_rate);
    d_ll.push_back(b.log_loss - a.log_loss);
    d_brier.push_back(b.brier - a.brier);
    d_ece.push_back(b.ece - a.ece);
    d_mcb.push_back(b.mcb - a.mcb);
  }
  r.base_rate.interval = percentile_interval(std::move(d_base), options.confidence);
  r.log_loss.interval = percentile_interval(std::move(d_ll), options.confidence);
  r.brier.interval = percentile_interval(std::move(d_brier), options.confidence);
  r.ece.interval = percentile_interval(std::move(d_ece), options.confidence);
  r.mcb.interval = percentile_interval(std::move(d_mcb), options.confidence);
  // Tonight's MCB against its distribution under calibration.
  std::vector<double> null_mcb;
  null_mcb.reserve(options.bootstrap);
  std::vector<double> wc(ns.weight.size());
  for (std::size_t rep = 0; rep < options.bootstrap; ++rep) {
    std::mt19937_64 gen((options.seed ^ 0x9E3779B97F4A7C15ULL) + rep);
    for (std::size_t c = 0; c < now.size(); ++c) {
      const double p = std::clamp(now_f[c], 0.0, 1.0);
      std::binomial_distribution<std::uint64_t> binomial(now[c].count, p);
      const std::uint64_t pos = binomial(gen);
      wc[2 * c] = static_cast<double>(now[c].count - pos);
      wc[2 * c + 1] = static_cast<double>(pos);
    }
    null_mcb.push_back(corp_decomposition(ns.forecast, ns.label, wc).brier.mcb);
  }
  std::size_t at_or_above = 0;
  for (double m : null_mcb) at_or_above += m >= r.mcb.tonight;
  r.refit_p_value = (1.0 + static_cast<double>(at_or_above)) / (1.0 + static_cast<double>(null_mcb.size()));
  r.mcb_if_calibrated = percentile_interval(null_mcb, 2.0 * options.confidence - 1.0).hi;
  r.refit = r.refit_p_value < 1.0 - options.confidence ? RefitVerdict::warranted : RefitVerdict::not_warranted;
  return r;
}

}  // namespace plumb
