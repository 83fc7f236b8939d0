#include "plumb/report.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <future>
#include <limits>
#include <numeric>

#include "core/metric_input.hpp"
#include "plumb/auc.hpp"
#include "plumb/error.hpp"
#include "plumb/forecast_cells.hpp"
#include "plumb/number_text.hpp"
#include "plumb/scores.hpp"

namespace plumb {
namespace {

constexpr std::array<GateMetric, 13> gate_table{{
    {"ece", true, false, "expected calibration error, equal-width bins"},
    {"ece_mass", true, false, "expected calibration error, equal-mass bins"},
    {"mce", true, false, "maximum calibration error, equal-width bins"},
    {"l2_debiased", true, false, "debiased L2 calibration error"},
    {"brier", true, false, "Brier score"},
    {"log_loss", true, false, "log loss in nats"},
    {"mcb", true, false, "CORP miscalibration of the Brier score"},
    {"mcb_log", true, false, "CORP miscalibration of the log loss"},
    {"calibration_in_the_large", true, true, "mean forecast - observed rate, signed"},
    {"slope", true, true, "calibration slope"},
    {"auc", false, true, "area under the ROC curve"},
    {"hosmer_lemeshow_p", false, true, "Hosmer-Lemeshow p-value"},
    {"spiegelhalter_p", false, true, "Spiegelhalter p-value"},
}};
// Older spellings, still read so that existing gates keep working.
constexpr std::array<GateMetric, 2> older_gate_table{{
    {"citl", true, false, "|mean forecast - observed rate|"},
    {"slope_gap", true, false, "|1 - calibration slope|"},
}};

// Below these the report says its bins are thin (common practice: about 10
// positives and 10 negatives per bin for a stable observed frequency).
constexpr double cases_per_bin = 10.0;
// Share of forecasts at exactly 0 or 1 above which the report cautions.
constexpr double extreme_share = 0.01;

// The step a value falls in, of steps starting at ascending `start`: the
// last k with start[k] <= value, or 0 when there is none (a value below the
// first step belongs to it). A table over 2^16 equal slices of [0, 1] holds
// the step at each slice's left end, so a value costs one table read and a
// short search among the steps that start within its slice: the rows find
// their cell's bin or PAV value in one sequential pass, without the sorted
// row order. Values must lie in [0, 1].
class StepIndex {
 public:
  explicit StepIndex(std::vector<double> start) : start_(std::move(start)), table_(slices + 1, 0) {
    std::size_t k = 0;
    for (std::size_t b = 0; b <= slices; ++b) {
      const double x = static_cast<double>(b) / static_cast<double>(slices);
      while (k + 1 < start_.size() && start_[k + 1] <= x) ++k;
      table_[b] = k;
    }
  }
  std::size_t operator()(double value) const noexcept {
    // value * 2^16 is exact, so slice b holds value: its step lies in
    // [table_[b], table_[b + 1]].
    const std::size_t b = std::min(slices - 1, static_cast<std::size_t>(value * static_cast<double>(slices)));
    std::size_t k = table_[b];
    const std::size_t last = table_[b + 1];
    if (last - k > 8) {
      const auto from = start_.begin() + static_cast<std::ptrdiff_t>(k) + 1;
      const auto to = start_.begin() + static_cast<std::ptrdiff_t>(last) + 1;
      return static_cast<std::size_t>(std::upper_bound(from, to, value) - start_.begin()) - 1;
    }
    while (k < last && start_[k + 1] <= value) ++k;
    return k;
  }

 private:
  static constexpr std::size_t slices = std::size_t{1} << 16;
  std::vector<double> start_;
  std::vector<std::size_t> table_;
};

// The CORP sums of corp_decomposition_given over the rows in row order, each
// row's recalibrated forecast read from the PAV curve by its forecast (the
// block whose range holds it; a forecast of zero weight with no block takes
// the block to its left, or the first, as pav_values does) rather than from
// a vector of them. The log-loss terms of the recalibrated forecast and of
// the base rate take few values, so those of labels 0 and 1 are computed
// once: the same terms added in the same order, so the same numbers. The
// log loss (log_loss's sums) is taken in the same pass, from the same terms.
// `total` and `positives` are the rows' sums in row order.
void corp_of_rows(ScoreSummary& s, const std::vector<PavBlock>& curve, std::span<const double> forecast,
                  std::span<const double> label, std::span<const double> weight, double total, double positives) {
  detail::require_positive_total("corp_decomposition", total);
  const double rate = positives / total;
  std::vector<double> start(curve.size());
  for (std::size_t j = 0; j < curve.size(); ++j) start[j] = curve[j].score_lo;
  const StepIndex step(std::move(start));
  // Per block: its value and its log-loss terms at labels 0 and 1.
  std::vector<std::array<double, 3>> block(std::max<std::size_t>(curve.size(), 1), {0.0, 0.0, 0.0});
  for (std::size_t j = 0; j < curve.size(); ++j)
    block[j] = {curve[j].value, log_loss_term(curve[j].value, 0.0), log_loss_term(curve[j].value, 1.0)};
  if (curve.empty()) block[0] = {0.0, log_loss_term(0.0, 0.0), log_loss_term(0.0, 1.0)};
  const double clim[2] = {log_loss_term(rate, 0.0), log_loss_term(rate, 1.0)};
  double bx = 0.0, bp = 0.0, bc = 0.0, lx = 0.0, lp = 0.0, lc = 0.0, log_sum = 0.0, log_total = 0.0;
  for (std::size_t i = 0; i < forecast.size(); ++i) {
    const double w = detail::weight_at(weight, i);
    if (w == 0.0) continue;  // such rows have no PAV value of their own (nor a log loss)
    const double y = label[i], x = forecast[i];
    const std::array<double, 3>& b = block[curve.empty() ? 0 : step(x)];
    const double r = b[0];
    const bool binary = y == 0.0 || y == 1.0;
    const std::size_t l = y == 1.0 ? 1 : 0;
    bx += w * (x - y) * (x - y);
    bp += w * (r - y) * (r - y);
    bc += w * (rate - y) * (rate - y);
    const double log_term = log_loss_term(x, y);
    log_sum += w * log_term;
    log_total += w;
    lx += w * log_term;
    lp += w * (binary ? b[1 + l] : log_loss_term(r, y));
    lc += w * (binary ? clim[l] : log_loss_term(rate, y));
  }
  s.corp_brier = corp_terms(bx, bp, bc, total);
  s.corp_log_loss = corp_terms(lx, lp, lc, total);
  detail::require_positive_total("log_loss", log_total);
  s.log_loss = log_sum / log_total;
}

// The equal-mass binning of make_binning over the rows of `cells` (their
// weights summed in row order to `total`): each cell's bin in `cell_bin`,
// then each row's, found from its forecast (the bins follow the forecast,
// so a row lies in the last non-empty bin that starts at or below it).
Binning mass_binning_of_rows(const ForecastCells& cells, std::span<const double> forecast, double total,
                             std::size_t bins, std::vector<std::uint32_t>* cell_bin = nullptr) {
  Binning out = mass_binning_of_cell_sums(cells, total, bins, cell_bin);
  std::vector<double> start;
  std::vector<std::uint32_t> bin;
  for (std::size_t b = 0; b < bins; ++b)
    if (!std::isnan(out.edge_lo[b])) {
      start.push_back(out.edge_lo[b]);
      bin.push_back(static_cast<std::uint32_t>(b));
    }
  out.bin_of_row.resize(forecast.size());
  if (!bin.empty()) {
    const StepIndex step(std::move(start));
    for (std::size_t i = 0; i < forecast.size(); ++i) out.bin_of_row[i] = bin[step(forecast[i])];
  }
  return out;
}

// The bootstrap's cells of unweighted rows with labels 0 and 1 from their
// forecast cells, whose sums are then counts: per distinct forecast its
// negative rows, then its positive rows (what bootstrap_cells gives).
BootstrapCells counted_bootstrap_cells(const ForecastCells& cells) {
  BootstrapCells out;
  for (std::size_t c = 0; c < cells.size(); ++c) {
    const double tally[2] = {cells.negatives[c], cells.positives[c]};
    for (int l = 0; l < 2; ++l) {
      if (!(tally[l] > 0.0)) continue;
      out.p.push_back(cells.forecast[c]);
      out.y.push_back(l);
      out.base.push_back(1.0);
      out.count.push_back(static_cast<std::uint64_t>(tally[l]));
    }
  }
  return out;
}

// The PAV curve's value at each cell's forecast, the cells in forecast
// order: the block whose range holds the forecast; a cell of zero weight
// with no block takes the block to its left (or the first), as pav_values
// does.
std::vector<double> pav_value_of_cells(const std::vector<PavBlock>& curve, std::span<const double> forecast) {
  std::vector<double> value(forecast.size());
  std::size_t j = 0;
  for (std::size_t c = 0; c < forecast.size(); ++c) {
    while (j + 1 < curve.size() && curve[j + 1].score_lo <= forecast[c]) ++j;
    value[c] = curve.empty() ? 0.0 : curve[j].value;
  }
  return value;
}

std::string format_g(double v, int digits = 4) {
  char text[48];
  std::snprintf(text, sizeof text, "%.*g", digits, v);
  return text;
}

std::vector<double> forecast_histogram(std::span<const double> f, std::span<const double> w, std::size_t bins) {
  std::vector<double> h(bins, 0.0);
  if (bins == 0) return h;
  for (std::size_t i = 0; i < f.size(); ++i) {
    const auto b = std::min(bins - 1, static_cast<std::size_t>(f[i] * static_cast<double>(bins)));
    h[b] += detail::weight_at(w, i);
  }
  return h;
}

// Weighted totals of one set of rows, shared by the overall and the
// per-segment summaries.
struct Totals {
  double weight = 0.0;
  double positives = 0.0;
  double weighted_forecast = 0.0;  // sum w p
  std::uint64_t at_zero_or_one = 0;
};

Totals totals(std::span<const double> f, std::span<const double> y, std::span<const double> w) {
  Totals t;
  for (std::size_t i = 0; i < f.size(); ++i) {
    const double wi = detail::weight_at(w, i);
    t.weight += wi;
    t.positives += wi * y[i];
    t.weighted_forecast += wi * f[i];
    if (f[i] == 0.0 || f[i] == 1.0) ++t.at_zero_or_one;
  }
  return t;
}

ScoreSummary summarise(const ForecastColumn& column, std::span<const double> y, std::span<const double> w,
                       const ReportOptions& o) {
  const std::span<const double> f = column.forecast;
  ScoreSummary s;
  s.name = column.name;
  s.rows = f.size();
  const Totals t = totals(f, y, w);
  s.weight = t.weight;
  s.positives = t.positives;
  s.at_zero_or_one = t.at_zero_or_one;
  detail::require_positive_total("report", s.weight);
  s.observed_rate = s.positives / s.weight;
  s.mean_forecast = t.weighted_forecast / s.weight;
  s.brier = brier_score(f, y, w);
  s.calibration_in_the_large = s.mean_forecast - s.observed_rate;

  // One sort of the rows into one cell per distinct forecast (unless the
  // caller counted them already); the rank-based figures read these, and
  // the rows find their bin and PAV value from their forecast.
  ForecastCells made;
  if (!column.cells) made = make_forecast_cells(f, y, w);
  const ForecastCells& cells = column.cells ? *column.cells : made;
  s.auc = auc_cells(cells.positives, cells.negatives);

  // Each binning made once, and its sums taken once.
  Binning width = make_binning(f, w, BinningKind::equal_width, o.bins);
  const std::vector<BinSums> width_sums = bin_sums(f, y, w, width);
  std::vector<std::uint32_t> mass_cell_bin;
  Binning mass = mass_binning_of_rows(cells, f, t.weight, o.bins, &mass_cell_bin);
  const std::vector<BinSums> mass_sums = bin_sums(f, y, w, mass);
  // Only the chosen binning's row labels are needed from here on.
  std::vector<std::uint32_t>().swap(o.binning == BinningKind::equal_mass ? width.bin_of_row : mass.bin_of_row);
  const Binning& binning = o.binning == BinningKind::equal_mass ? mass : width;
  const std::vector<BinSums>& sums = o.binning == BinningKind::equal_mass ? mass_sums : width_sums;
  if (o.hl_groups == o.bins) {
    s.hosmer_lemeshow = hosmer_lemeshow(mass_sums, o.hl_groups);
  } else {
    const Binning groups = mass_binning_of_rows(cells, f, t.weight, o.hl_groups);
    s.hosmer_lemeshow = hosmer_lemeshow(bin_sums(f, y, w, groups), o.hl_groups);
  }

  // The calibration regression (Newton steps over the cells) reads only the
  // cells, so it runs beside the row passes below unless one thread is
  // asked for; its numbers do not depend on it. It starts once the rows'
  // second binning is released, so that its buffers do not add to that.
  std::future<CalibrationRegression> regression;
  if (o.threads != 1)
    regression = std::async(std::launch::async, [&cells] { return calibration_regression(cells); });
  else
    s.regression = calibration_regression(cells);
  // Joined on every way out of this function, before the cells go.
  struct Join {
    std::future<CalibrationRegression>& f;
    ~Join() {
      if (f.valid()) f.wait();
    }
  } join{regression};

  // PAV once, from the cells: the CORP curve, and each row's recalibrated
  // forecast for the CORP sums (taken in row order, as corp_decomposition does).
  s.pav_curve = pav_fit_cells(cells.forecast, cells.positives, cells.weight);
  corp_of_rows(s, s.pav_curve, f, y, w, t.weight, t.positives);
  s.murphy = murphy_decomposition(f, y, w, binning, sums, s.brier);
  s.table = reliability_table(binning, sums, o.confidence);
  s.ece_equal_width = calibration_error(width_sums, BinningKind::equal_width);
  s.ece_equal_mass = calibration_error(mass_sums, BinningKind::equal_mass);
  s.spiegelhalter = spiegelhalter_z(f, y, w);
  s.histogram = forecast_histogram(f, w, o.histogram_bins);
  if (regression.valid()) s.regression = regression.get();
  if (o.bootstrap > 0) {
    BootstrapOptions b;
    b.replicates = o.bootstrap;
    b.threads = o.threads;
    b.seed = o.seed;
    b.confidence = o.confidence;
    b.binning = BinningKind::equal_width;
    b.bins = o.bins;
    // The resampled cells, then (without weights) the band's cells and bin
    // weights; the row order and the rows' bins are released first, as the
    // replicates need only cells.
    const BootstrapCells resampled =
        cells.order.empty() ? counted_bootstrap_cells(cells) : bootstrap_cells(f, y, w, cells);
    b.binning = o.binning;
    if (w.empty()) {
      std::vector<std::uint32_t> band_bin;
      if (o.binning == BinningKind::equal_mass) {
        band_bin = std::move(mass_cell_bin);
      } else {
        band_bin.resize(cells.size());
        for (std::size_t c = 0; c < cells.size(); ++c) band_bin[c] = equal_width_bin(cells.forecast[c], o.bins);
      }
      std::vector<double> bin_weight(sums.size());
      for (std::size_t i = 0; i < sums.size(); ++i) bin_weight[i] = sums[i].weight;
      std::vector<std::uint32_t>().swap(made.order);
      std::vector<std::uint32_t>().swap(o.binning == BinningKind::equal_mass ? mass.bin_of_row : width.bin_of_row);
      s.band = consistency_band_of_cells(cells.forecast, cells.rows, band_bin, bin_weight, b);
    } else {
      s.band = consistency_band(f, w, binning, b, cells);
    }
    b.binning = BinningKind::equal_width;
    s.bootstrap = bootstrap_metrics_of_cells(resampled.p, resampled.y, resampled.base, resampled.count, b);
  }
  return s;
}

// The rows entry c stands for, as cells of one label: its label-0 rows,
// then its label-1 rows, a label without weight left out. cell(y, weight,
// rows, weight_sq) is called per cell: with unit weights the weight is the
// row count and weight_sq unused (0); with weights the entry's rows and
// squared weights are counted on its first cell (0 on the second).
template <class Cell>
void each_cell(const TallyCells& cells, std::size_t c, Cell cell) {
  const double weight[2] = {cells.negatives[c], cells.positives[c]};
  bool first = true;
  for (int l = 0; l < 2; ++l) {
    if (!(weight[l] > 0.0)) continue;
    if (cells.unit_weights)
      cell(static_cast<double>(l), weight[l], static_cast<std::uint64_t>(weight[l]), 0.0);
    else
      cell(static_cast<double>(l), weight[l], first ? cells.rows[c] : 0, first ? cells.weight_sq[c] : 0.0);
    first = false;
  }
}

// Calls add(w) once per row a cell of `weight` and `rows` stands for:
// rows times with w = 1 for unit weights (the sums then round as over the
// rows), else once with the cell's weight.
template <class Add>
void each_row(bool unit_weights, double weight, std::uint64_t rows, Add add) {
  if (unit_weights) {
    for (std::uint64_t k = 0; k < rows; ++k) add(1.0);
  } else {
    add(weight);
  }
}

// bin_sums over the rows of the entries, `bin` one per entry.
std::vector<BinSums> cell_bin_sums(const TallyCells& cells, const std::vector<std::uint32_t>& bin, std::size_t bins) {
  std::vector<BinSums> sums(bins);
  for (auto& s : sums) s.forecast_min = s.forecast_max = std::numeric_limits<double>::quiet_NaN();
  for (std::size_t c = 0; c < cells.size(); ++c) {
    BinSums& s = sums[bin[c]];
    const double p = cells.forecast[c];
    each_cell(cells, c, [&](double y, double weight, std::uint64_t rows, double weight_sq) {
      if (s.rows == 0) {
        s.forecast_min = s.forecast_max = p;
      } else {
        s.forecast_min = std::min(s.forecast_min, p);
        s.forecast_max = std::max(s.forecast_max, p);
      }
      s.rows += rows;
      each_row(cells.unit_weights, weight, rows, [&](double w) {
        s.weight += w;
        s.forecast += w * p;
        s.label += w * y;
        if (cells.unit_weights) s.weight_sq += w * w;
      });
      if (!cells.unit_weights) s.weight_sq += weight_sq;
    });
  }
  return sums;
}

// The equal-mass binning of make_binning over the rows of the entries:
// bin_of_row holds one bin per entry. `sorted` lists the entries by
// forecast (stably), empty when they are in ascending forecast already;
// `total` is the rows' weight summed in row order.
Binning cell_mass_binning(const TallyCells& cells, const std::vector<std::size_t>& sorted, std::size_t bins,
                          double total) {
  const std::size_t n = cells.size();
  const auto at = [&](std::size_t k) { return sorted.empty() ? k : sorted[k]; };
  if (bins == 0) throw Error(ErrorKind::usage, "the number of bins must be positive", {}, "0", "1 or more");
  Binning out;
  out.kind = BinningKind::equal_mass;
  out.bin_count = bins;
  out.bin_of_row.resize(cells.size());
  out.edge_lo.assign(bins, std::numeric_limits<double>::quiet_NaN());
  out.edge_hi.assign(bins, std::numeric_limits<double>::quiet_NaN());
  const double k = static_cast<double>(bins);
  double before = 0.0;
  for (std::size_t s = 0; s < n;) {
    std::size_t e = s;
    double group = 0.0;
    while (e < n && cells.forecast[at(e)] == cells.forecast[at(s)]) {
      each_cell(cells, at(e), [&](double, double weight, std::uint64_t rows, double) {
        each_row(cells.unit_weights, weight, rows, [&](double w) { group += w; });
      });
      ++e;
    }
    const double pos = total > 0.0 ? k * (before + 0.5 * group) / total : 0.0;
    const auto b = static_cast<std::uint32_t>(std::min(std::floor(pos), k - 1.0));
    for (std::size_t t = s; t < e; ++t) out.bin_of_row[at(t)] = b;
    const double p = cells.forecast[at(s)];
    if (std::isnan(out.edge_lo[b])) out.edge_lo[b] = p;
    out.edge_hi[b] = p;
    before += group;
    s = e;
  }
  return out;
}

// One entry per distinct forecast, ascending, summed over the entries (and
// their rows) in sorted order: what ForecastCells holds for rows. When the
// entries are sorted and distinct already (a tally's scores) the sums of an
// entry's rows are its own negatives and positives, exactly (each is one
// label's weight plus zeros), so those columns are read in place and only
// the weights are stored.
struct DistinctForecasts {
  std::span<const double> forecast, positives, negatives;
  std::vector<double> weight;
  std::vector<std::uint64_t> rows;  // only with weights: unit-weight rows are the weight
  std::vector<double> own_forecast, own_positives, own_negatives;
  std::size_t size() const noexcept { return forecast.size(); }
};

DistinctForecasts distinct_forecasts(const TallyCells& lc, const std::vector<std::size_t>& sorted, bool distinct) {
  const std::size_t n = lc.size();
  const auto at = [&](std::size_t k) { return sorted.empty() ? k : sorted[k]; };
  DistinctForecasts fc;
  for (std::size_t k = 0; k < n;) {
    const double f = lc.forecast[at(k)];
    double w = 0.0, pos = 0.0, neg = 0.0;
    std::uint64_t rows = 0;
    for (; k < n && lc.forecast[at(k)] == f; ++k) {
      each_cell(lc, at(k), [&](double y, double weight, std::uint64_t cell_rows, double) {
        rows += cell_rows;
        each_row(lc.unit_weights, weight, cell_rows, [&](double wi) {
          w += wi;
          pos += wi * y;
          neg += wi * (1.0 - y);
        });
      });
    }
    if (!distinct) {
      fc.own_forecast.push_back(f);
      fc.own_positives.push_back(pos);
      fc.own_negatives.push_back(neg);
    }
    fc.weight.push_back(w);
    if (!lc.unit_weights) fc.rows.push_back(rows);
  }
  if (distinct) {
    fc.forecast = lc.forecast;
    fc.positives = lc.positives;
    fc.negatives = lc.negatives;
  } else {
    fc.forecast = fc.own_forecast;
    fc.positives = fc.own_positives;
    fc.negatives = fc.own_negatives;
  }
  return fc;
}

// summarise() for rows given per score (report --tally): the same figures,
// the row-order sums replayed entry by entry.
ScoreSummary summarise_cells(const ForecastCellColumn& column, const ReportOptions& o) {
  const TallyCells& lc = column.cells;
  const std::size_t n = lc.size();
  ScoreSummary s;
  s.name = column.name;
  Totals t;
  double brier = 0.0, log_sum = 0.0, log_total = 0.0, spg_num = 0.0, spg_var = 0.0;
  s.histogram.assign(o.histogram_bins, 0.0);
  for (std::size_t c = 0; c < n; ++c) {
    const double f = lc.forecast[c];
    const double lever = 1.0 - 2.0 * f;
    const std::size_t hb =
        o.histogram_bins == 0 ? 0 : std::min(o.histogram_bins - 1, static_cast<std::size_t>(f * static_cast<double>(o.histogram_bins)));
    each_cell(lc, c, [&](double y, double weight, std::uint64_t rows, double) {
      s.rows += rows;
      if (f == 0.0 || f == 1.0) t.at_zero_or_one += rows;
      const double d = f - y, log_term = log_loss_term(f, y);
      each_row(lc.unit_weights, weight, rows, [&](double w) {
        t.weight += w;
        t.positives += w * y;
        t.weighted_forecast += w * f;
        brier += w * d * d;
        if (w != 0.0) {
          log_sum += w * log_term;
          log_total += w;
        }
        spg_num += w * (y - f) * lever;
        spg_var += w * lever * lever * f * (1.0 - f);
        if (o.histogram_bins > 0) s.histogram[hb] += w;
      });
    });
  }
  s.weight = t.weight;
  s.positives = t.positives;
  s.at_zero_or_one = t.at_zero_or_one;
  detail::require_positive_total("report", s.weight);
  s.observed_rate = s.positives / s.weight;
  s.mean_forecast = t.weighted_forecast / s.weight;
  s.brier = brier / t.weight;
  detail::require_positive_total("log_loss", log_total);
  s.log_loss = log_sum / log_total;
  s.calibration_in_the_large = s.mean_forecast - s.observed_rate;
  s.spiegelhalter = spiegelhalter_from_sums(spg_num, spg_var);

  // The entries by forecast (stably), and one entry per distinct forecast.
  // A tally's entries come in ascending forecast already (its scores are
  // sorted and distinct): then the order is the identity and is not stored
  // (`sorted` empty), which is what the stable sort would give, and the
  // per-forecast sums are the entries' own columns.
  std::vector<std::size_t> sorted;
  if (!std::is_sorted(lc.forecast.begin(), lc.forecast.end())) {
    sorted.resize(n);
    std::iota(sorted.begin(), sorted.end(), std::size_t{0});
    std::stable_sort(sorted.begin(), sorted.end(),
                     [&](std::size_t a, std::size_t b) { return lc.forecast[a] < lc.forecast[b]; });
  }
  const auto at = [&](std::size_t k) { return sorted.empty() ? k : sorted[k]; };
  const bool distinct =
      sorted.empty() && std::adjacent_find(lc.forecast.begin(), lc.forecast.end(),
                                           [](double a, double b) { return !(a < b); }) == lc.forecast.end();
  const DistinctForecasts fc = distinct_forecasts(lc, sorted, distinct);
  s.regression = calibration_regression_of_sums(fc.forecast, fc.weight, fc.positives, fc.negatives, fc.rows);
  s.auc = auc_cells(fc.positives, fc.negatives);
  s.pav_curve = pav_fit_cells(fc.forecast, fc.positives, fc.weight);

  // CORP: each entry's recalibrated forecast, then the sums in row order.
  {
    const std::vector<double> value = pav_value_of_cells(s.pav_curve, fc.forecast);
    std::vector<double> by_entry;
    if (!distinct) {
      by_entry.resize(n);
      for (std::size_t k = 0, g = 0; k < n; ++k) {
        if (k > 0 && lc.forecast[at(k)] != lc.forecast[at(k - 1)]) ++g;
        by_entry[at(k)] = value[g];
      }
    }
    const std::vector<double>& recalibrated = distinct ? value : by_entry;
    const double rate = t.positives / t.weight;
    double bx = 0.0, bp = 0.0, bc = 0.0, lx = 0.0, lp = 0.0, lcl = 0.0;
    for (std::size_t c = 0; c < n; ++c) {
      const double x = lc.forecast[c], r = recalibrated[c];
      each_cell(lc, c, [&](double y, double weight, std::uint64_t rows, double) {
        const double tx = log_loss_term(x, y), tp = log_loss_term(r, y), tc = log_loss_term(rate, y);
        each_row(lc.unit_weights, weight, rows, [&](double w) {
          if (w == 0.0) return;
          bx += w * (x - y) * (x - y);
          bp += w * (r - y) * (r - y);
          bc += w * (rate - y) * (rate - y);
          lx += w * tx;
          lp += w * tp;
          lcl += w * tc;
        });
      });
    }
    s.corp_brier = corp_terms(bx, bp, bc, t.weight);
    s.corp_log_loss = corp_terms(lx, lp, lcl, t.weight);
  }

  // Both binnings, once each.
  Binning width;
  width.kind = BinningKind::equal_width;
  width.bin_count = o.bins;
  width.bin_of_row.resize(n);
  for (std::size_t c = 0; c < n; ++c) width.bin_of_row[c] = equal_width_bin(lc.forecast[c], o.bins);
  for (std::size_t b = 0; b < o.bins; ++b) {
    width.edge_lo.push_back(static_cast<double>(b) / static_cast<double>(o.bins));
    width.edge_hi.push_back(static_cast<double>(b + 1) / static_cast<double>(o.bins));
  }
  const std::vector<BinSums> width_sums = cell_bin_sums(lc, width.bin_of_row, o.bins);
  const Binning mass = cell_mass_binning(lc, sorted, o.bins, t.weight);
  const std::vector<BinSums> mass_sums = cell_bin_sums(lc, mass.bin_of_row, o.bins);
  const Binning& binning = o.binning == BinningKind::equal_mass ? mass : width;
  const std::vector<BinSums>& sums = o.binning == BinningKind::equal_mass ? mass_sums : width_sums;
  {
    double variance = 0.0, covariance = 0.0;
    for (std::size_t c = 0; c < n; ++c) {
      const BinSums& b = sums[binning.bin_of_row[c]];
      if (!(b.weight > 0.0)) continue;
      const double dp = lc.forecast[c] - b.mean_forecast();
      each_cell(lc, c, [&](double y, double weight, std::uint64_t rows, double) {
        const double dy = y - b.observed();
        each_row(lc.unit_weights, weight, rows, [&](double w) {
          variance += w * dp * dp;
          covariance += w * dp * dy;
        });
      });
    }
    s.murphy = murphy_from_sums(sums, s.brier, variance, covariance);
  }
  s.table = reliability_table(binning, sums, o.confidence);
  s.ece_equal_width = calibration_error(width_sums, BinningKind::equal_width);
  s.ece_equal_mass = calibration_error(mass_sums, BinningKind::equal_mass);
  if (o.hl_groups == o.bins) {
    s.hosmer_lemeshow = hosmer_lemeshow(mass_sums, o.hl_groups);
  } else {
    const Binning groups = cell_mass_binning(lc, sorted, o.hl_groups, t.weight);
    s.hosmer_lemeshow = hosmer_lemeshow(cell_bin_sums(lc, groups.bin_of_row, o.hl_groups), o.hl_groups);
  }
  if (o.bootstrap > 0) {
    if (!lc.unit_weights)
      throw Error(ErrorKind::usage,
                  "the bootstrap resamples rows, and a tally of weighted rows has summed their weights", {},
                  column.name, "--bootstrap 0 with a weighted tally, or plumb report on the rows");
    BootstrapOptions b;
    b.replicates = o.bootstrap;
    b.threads = o.threads;
    b.seed = o.seed;
    b.confidence = o.confidence;
    b.binning = BinningKind::equal_width;
    b.bins = o.bins;
    // The bootstrap's cells: per distinct forecast its negative rows, then
    // its positive rows.
    std::vector<double> p, y, base;
    std::vector<std::uint64_t> count, rows;
    std::vector<std::uint32_t> band_bin;
    for (std::size_t k = 0, g = 0; k < n; ++g) {
      const std::size_t first = k;
      std::uint64_t tally[2] = {0, 0};
      for (; k < n && lc.forecast[at(k)] == lc.forecast[at(first)]; ++k)
        each_cell(lc, at(k), [&](double label, double, std::uint64_t cell_rows, double) {
          tally[label > 0.5 ? 1 : 0] += cell_rows;
        });
      for (int l = 0; l < 2; ++l) {
        if (tally[l] == 0) continue;
        p.push_back(fc.forecast[g]);
        y.push_back(l);
        base.push_back(1.0);
        count.push_back(tally[l]);
      }
      rows.push_back(tally[0] + tally[1]);
      band_bin.push_back(binning.bin_of_row[at(first)]);
    }
    s.bootstrap = bootstrap_metrics_of_cells(p, y, base, count, b);
    b.binning = o.binning;
    std::vector<double> bin_weight(sums.size());
    for (std::size_t i = 0; i < sums.size(); ++i) bin_weight[i] = sums[i].weight;
    s.band = consistency_band_of_cells(fc.forecast, rows, band_bin, bin_weight, b);
  }
  return s;
}

SegmentSummary summarise_segment(std::string value, std::span<const double> f, std::span<const double> y,
                                 std::span<const double> w, const ReportOptions& o) {
  SegmentSummary s;
  s.value = std::move(value);
  s.rows = f.size();
  const Totals t = totals(f, y, w);
  s.weight = t.weight;
  s.positives = t.positives;
  s.too_few = !(s.weight >= o.min_segment_weight) || !(s.weight > 0.0);
  if (s.too_few) return s;
  s.mean_forecast = t.weighted_forecast / s.weight;
  s.observed_rate = s.positives / s.weight;
  s.calibration_in_the_large = s.mean_forecast - s.observed_rate;
  s.ece = calibration_error(f, y, w, BinningKind::equal_width, o.bins).ece;
  s.brier = brier_score(f, y, w);
  s.log_loss = log_loss(f, y, w);
  s.spiegelhalter = spiegelhalter_z(f, y, w);
  return s;
}

// Holm (1979) step-down adjustment of the segments' Spiegelhalter p-values:
// sorted ascending, p_(i) * (m - i) made monotone, capped at 1.
void holm_adjust(std::vector<SegmentSummary>& segments, double alpha) {
  std::vector<SegmentSummary*> tested;
  for (SegmentSummary& s : segments)
    if (!s.too_few && std::isfinite(s.spiegelhalter.p_value)) tested.push_back(&s);
  std::sort(tested.begin(), tested.end(), [](const SegmentSummary* a, const SegmentSummary* b) {
    return a->spiegelhalter.p_value < b->spiegelhalter.p_value;
  });
  const double m = static_cast<double>(tested.size());
  double running = 0.0;
  for (std::size_t i = 0; i < tested.size(); ++i) {
    const double adjusted = std::min(1.0, tested[i]->spiegelhalter.p_value * (m - static_cast<double>(i)));
    running = std::max(running, adjusted);
    tested[i]->p_adjusted = running;
    tested[i]->flagged = running < alpha;
  }
}

std::vector<SegmentSummary> segment_summaries(std::span<const double> f, std::span<const double> y,
                                              std::span<const double> w, std::span<const std::uint32_t> segment,
                                              std::span<const std::string> names, const ReportOptions& o) {
  // Rows of each segment, gathered in one pass (counting sort by segment).
  std::vector<std::size_t> start(names.size() + 1, 0);
  for (std::uint32_t s : segment) ++start[s + 1];
  std::partial_sum(start.begin(), start.end(), start.begin());
  std::vector<std::size_t> next(start.begin(), start.end() - 1);
  std::vector<double> fs(f.size()), ys(f.size()), ws(w.empty() ? 0 : f.size());
  for (std::size_t i = 0; i < f.size(); ++i) {
    const std::size_t at = next[segment[i]]++;
    fs[at] = f[i];
    ys[at] = y[i];
    if (!w.empty()) ws[at] = w[i];
  }
  std::vector<SegmentSummary> out;
  out.reserve(names.size());
  for (std::size_t s = 0; s < names.size(); ++s) {
    const std::size_t b = start[s], n = start[s + 1] - b;
    out.push_back(summarise_segment(names[s], std::span(fs).subspan(b, n), std::span(ys).subspan(b, n),
                                    w.empty() ? std::span<const double>() : std::span<const double>(ws).subspan(b, n),
                                    o));
  }
  holm_adjust(out, o.segment_alpha);
  std::stable_sort(out.begin(), out.end(), [](const SegmentSummary& a, const SegmentSummary& b) {
    if (a.too_few != b.too_few) return b.too_few;
    if (a.too_few) return a.value < b.value;
    return std::fabs(a.calibration_in_the_large) > std::fabs(b.calibration_in_the_large);
  });
  return out;
}

void add_cautions(Report& r) {
  const ReportOptions& o = r.options;
  for (const ScoreReport& sr : r.scores) {
    const ScoreSummary& s = sr.overall;
    const double negatives = s.weight - s.positives;
    if (std::min(s.positives, negatives) < cases_per_bin * static_cast<double>(o.bins))
      r.cautions.push_back(s.name + ": " + format_g(std::min(s.positives, negatives)) + " rows of the rarer class for " +
                           std::to_string(o.bins) + " bins; observed frequencies per bin are noisy (common practice: "
                           "about 10 per bin) - consider fewer bins (--bins)");
    if (static_cast<double>(s.at_zero_or_one) > extreme_share * static_cast<double>(s.rows))
      r.cautions.push_back(s.name + ": " + std::to_string(s.at_zero_or_one) + " forecasts are exactly 0 or 1; the log "
                           "loss counts each confident miss as about 27.6 nats (clipped at 1e-12)");
  }
  // One caution per flagged segment value, naming every column it is
  // flagged on, in the order the segments are first found.
  std::vector<std::string> values;
  std::vector<std::string> observed;
  std::vector<std::string> details;
  for (const ScoreReport& sr : r.scores)
    for (const SegmentSummary& g : sr.segments) {
      if (!g.flagged) continue;
      // The observed rate is the segment's own (the same rows and labels
      // for every column), so it is said once.
      const std::string detail =
          sr.overall.name + " (mean forecast " + fixed_text(g.mean_forecast, 4) + ", Spiegelhalter Z " +
          stat_text(g.spiegelhalter.z) + ", Holm-adjusted p " + p_value_text(g.p_adjusted) + ")";
      const auto at = std::find(values.begin(), values.end(), g.value);
      if (at == values.end()) {
        values.push_back(g.value);
        observed.push_back(fixed_text(g.observed_rate, 4));
        details.push_back(detail);
      } else {
        details[static_cast<std::size_t>(at - values.begin())] += "; " + detail;
      }
    }
  for (std::size_t i = 0; i < values.size(); ++i)
    r.cautions.push_back("segment '" + values[i] + "' (observed rate " + observed[i] + ") is miscalibrated in " +
                         details[i]);
}

}  // namespace

bool Report::any_gate_exceeded() const noexcept {
  return std::any_of(gates.begin(), gates.end(), [](const GateResult& g) { return g.exceeded; });
}

std::span<const GateMetric> gate_metrics() noexcept { return gate_table; }

const GateMetric* find_gate_metric(std::string_view name) noexcept {
  if (name == "hl_p") name = "hosmer_lemeshow_p";
  for (const GateMetric& m : gate_table)
    if (m.name == name) return &m;
  for (const GateMetric& m : older_gate_table)
    if (m.name == name) return &m;
  return nullptr;
}

double gate_value(const ScoreSummary& s, std::string_view metric) {
  if (metric == "ece") return s.ece_equal_width.ece;
  if (metric == "ece_mass") return s.ece_equal_mass.ece;
  if (metric == "mce") return s.ece_equal_width.mce;
  if (metric == "l2_debiased") return s.ece_equal_width.l2_debiased;
  if (metric == "brier") return s.brier;
  if (metric == "log_loss") return s.log_loss;
  if (metric == "mcb") return s.corp_brier.mcb;
  if (metric == "mcb_log") return s.corp_log_loss.mcb;
  if (metric == "calibration_in_the_large") return s.calibration_in_the_large;
  if (metric == "slope") return s.regression.slope;
  if (metric == "auc") return s.auc;
  if (metric == "hosmer_lemeshow_p" || metric == "hl_p") return s.hosmer_lemeshow.p_value;
  if (metric == "spiegelhalter_p") return s.spiegelhalter.p_value;
  if (metric == "citl") return std::fabs(s.calibration_in_the_large);
  if (metric == "slope_gap") return std::fabs(1.0 - s.regression.slope);
  throw Error(ErrorKind::internal, "gate_value: unknown metric " + std::string(metric));
}

GateResult check_gate(const Gate& g, const ScoreSummary& s) {
  GateResult result{g, s.name, gate_value(s, g.metric), false};
  result.exceeded = g.bound == GateBound::max ? !(result.value <= g.limit) : !(result.value >= g.limit);
  return result;
}

std::string_view gate_comparison(const GateResult& r) noexcept {
  if (!std::isfinite(r.value)) return {};
  if (r.gate.bound == GateBound::max) return r.exceeded ? ">" : "<=";
  return r.exceeded ? "<" : ">=";
}

void finish_report(Report& r, const std::vector<Gate>& gates);

Report build_report(std::span<const ForecastColumn> columns, std::span<const double> label,
                    std::span<const double> weight, std::span<const std::uint32_t> segment,
                    std::span<const std::string> segment_names, const std::vector<Gate>& gates,
                    const ReportOptions& options) {
  Report r;
  r.options = options;
  for (const ForecastColumn& c : columns) {
    detail::check_metric_input("build_report", c.forecast, label, weight);
    if (!segment.empty() && segment.size() != label.size())
      throw Error(ErrorKind::internal, "build_report: segment column differs in length");
    ScoreReport sr;
    sr.overall = summarise(c, label, weight, options);
    if (!segment.empty()) sr.segments = segment_summaries(c.forecast, label, weight, segment, segment_names, options);
    r.scores.push_back(std::move(sr));
  }
  finish_report(r, gates);
  return r;
}

Report build_report_of_cells(std::span<const ForecastCellColumn> columns, const std::vector<Gate>& gates,
                             const ReportOptions& options) {
  Report r;
  r.options = options;
  for (const ForecastCellColumn& c : columns) {
    const TallyCells& lc = c.cells;
    const std::size_t n = lc.size();
    if (lc.negatives.size() != n || lc.positives.size() != n ||
        (!lc.unit_weights && (lc.rows.size() != n || lc.weight_sq.size() != n)))
      throw Error(ErrorKind::internal, "build_report_of_cells: cell columns differ in length");
    for (std::size_t k = 0; k < n; ++k) {
      const double neg = lc.negatives[k], pos = lc.positives[k];
      const bool counts = !lc.unit_weights || (std::floor(neg) == neg && std::floor(pos) == pos);
      if (!(lc.forecast[k] >= 0.0 && lc.forecast[k] <= 1.0) || !(neg >= 0.0 && pos >= 0.0) ||
          !std::isfinite(neg + pos) || !counts)
        throw Error(ErrorKind::internal, "build_report_of_cells: an entry's forecast or weights are out of range");
    }
    ScoreReport sr;
    sr.overall = summarise_cells(c, options);
    r.scores.push_back(std::move(sr));
  }
  finish_report(r, gates);
  return r;
}

void finish_report(Report& r, const std::vector<Gate>& gates) {
  for (const Gate& g : gates) {
    bool matched = false;
    for (const ScoreReport& sr : r.scores) {
      if (!g.column.empty() && g.column != sr.overall.name) continue;
      matched = true;
      r.gates.push_back(check_gate(g, sr.overall));
    }
    if (!matched)
      throw Error(ErrorKind::usage, "--max names a column that is not reported", {}, g.column,
                  "one of the --score columns");
  }
  add_cautions(r);
}

IntervalWidth interval_width_summary(std::span<const double> width, std::span<const double> weight) {
  IntervalWidth out;
  std::vector<std::size_t> order(width.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return width[a] < width[b]; });
  auto w = [&](std::size_t i) { return weight.empty() ? 1.0 : weight[i]; };
  double total = 0.0, sum = 0.0;
  for (std::size_t i = 0; i < width.size(); ++i) {
    total += w(i);
    sum += w(i) * width[i];
  }
  out.mean = total > 0.0 ? sum / total : 0.0;
  // The inverse of the weighted distribution function at q.
  auto quantile = [&](double q) {
    double seen = 0.0;
    for (std::size_t i : order) {
      seen += w(i);
      if (w(i) > 0.0 && seen >= q * total) return width[i];
    }
    return order.empty() ? 0.0 : width[order.back()];
  };
  out.median = quantile(0.5);
  out.p90 = quantile(0.9);
  return out;
}

}  // namespace plumb
