#pragma once
// The reliability report: every metric of one or more forecast columns on
// one set of labelled rows, overall and per segment, with resampling
// uncertainty, pass/fail gates and plain-language cautions. Pure
// computation; the renderers (report_render.hpp) turn it into text, JSON,
// SVG and Markdown.
#include <cstddef>
#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/binning.hpp"
#include "plumb/bootstrap.hpp"
#include "plumb/calibration_error.hpp"
#include "plumb/calibration_regression.hpp"
#include "plumb/corp.hpp"
#include "plumb/forecast_cells.hpp"
#include "plumb/goodness_of_fit.hpp"
#include "plumb/murphy.hpp"
#include "plumb/pav.hpp"
#include "plumb/reliability.hpp"

namespace plumb {

struct ReportOptions {
  std::size_t bins = 10;                           // reliability table, ECE, Murphy
  BinningKind binning = BinningKind::equal_width;  // of the reliability table and chart
  std::size_t bootstrap = 200;                     // replicates; 0: no intervals and no band
  std::uint64_t seed = 1;
  double confidence = 0.95;                        // every interval and band
  std::size_t hl_groups = 10;                      // Hosmer-Lemeshow groups
  double min_segment_weight = 100.0;               // smaller segments say "too few rows"
  double segment_alpha = 0.05;                     // family-wise level of the segment flags
  std::size_t histogram_bins = 50;                 // equal-width forecast histogram (for charts)
  // Bootstrap threads (0: one per core); with 1 the calibration regression
  // also stays on the calling thread. Never changes a number.
  std::size_t threads = 0;
};

// One forecast column on one set of rows.
// The width p1 - p0 of a map's interval over the reported rows (plumb
// report --map with a Venn-Abers map): the weighted mean, and the median and
// 90th percentile as the inverse of the weighted empirical distribution
// function (the smallest width w whose rows weigh at least q of the total;
// R's quantile type 1 for unit weights, Hyndman and Fan 1996).
struct IntervalWidth {
  double mean = 0.0, median = 0.0, p90 = 0.0;
};
// Precondition: width non-empty, finite, >= 0; weight empty (all 1) or of
// the same length, >= 0 with a positive sum.
IntervalWidth interval_width_summary(std::span<const double> width, std::span<const double> weight = {});

struct ScoreSummary {
  std::string name;  // the column's name (or "COLUMN via MAP" when mapped on the fly)
  std::uint64_t rows = 0;
  double weight = 0.0;
  double positives = 0.0;       // weight of positive rows
  double observed_rate = 0.0;   // positives / weight
  double mean_forecast = 0.0;
  double brier = 0.0;
  double log_loss = 0.0;        // nats
  double auc = 0.0;             // NaN when a class is absent
  double calibration_in_the_large = 0.0;  // mean forecast - observed rate
  CalibrationRegression regression;       // Cox (1958) slope and intercepts
  MurphyDecomposition murphy;             // over `table`'s binning
  CorpTerms corp_brier;                   // Dimitriadis, Gneiting and Jordan (2021)
  CorpTerms corp_log_loss;
  CalibrationError ece_equal_width;       // both binnings, `bins` bins each
  CalibrationError ece_equal_mass;
  HosmerLemeshow hosmer_lemeshow;
  SpiegelhalterZ spiegelhalter;
  std::optional<BootstrapResult> bootstrap;  // absent when options.bootstrap == 0
  ReliabilityTable table;                    // options.binning, options.bins
  std::vector<Interval> band;                // consistency band per table bin (empty without bootstrap)
  std::vector<PavBlock> pav_curve;           // the CORP reliability curve (PAV of label on forecast)
  std::vector<double> histogram;             // weight of forecasts in histogram_bins equal-width bins of [0, 1]
  std::uint64_t at_zero_or_one = 0;          // forecasts exactly 0 or 1
  // Set by the caller for a column mapped by a map with an interval.
  std::optional<IntervalWidth> interval_width;
};

// The key figures of one forecast column within one segment.
struct SegmentSummary {
  std::string value;  // the segment column's value
  std::uint64_t rows = 0;
  double weight = 0.0;
  double positives = 0.0;
  bool too_few = false;  // weight < min_segment_weight: only rows, weight and positives are set
  double mean_forecast = 0.0;
  double observed_rate = 0.0;
  double calibration_in_the_large = 0.0;
  double ece = 0.0;  // equal-width, options.bins
  double brier = 0.0;
  double log_loss = 0.0;
  SpiegelhalterZ spiegelhalter;
  double p_adjusted = 1.0;  // Holm (1979) over the segments that have a number
  bool flagged = false;     // p_adjusted < segment_alpha
};

// Where a column mapped on the fly came from (plumb report --map): the
// source column, the map file as named and the map's kind. Set by the
// caller after build_report; the renderers name the column from it.
struct MapOrigin {
  std::string column;  // the score column the map was applied to
  std::string file;    // the map file as given
  std::string kind;    // "isotonic", "platt", ...
  // The map's identity and provenance as its artifact records them (empty
  // when not known): the integrity hash, which changes with every refit;
  // when and by what it was fitted; the fit input's name, hash and rows.
  std::string integrity;
  std::string created_utc;
  std::string tool;
  std::string fitted_source;
  std::string fitted_sha256;
  std::uint64_t fitted_rows = 0;
};

struct ScoreReport {
  ScoreSummary overall;
  std::optional<MapOrigin> map;  // absent for a column reported as read
  // Sorted by how far off each segment is: |calibration_in_the_large|
  // descending; too-few segments last, by value. Empty without --by.
  std::vector<SegmentSummary> segments;
};

// Which side a gate bounds: --max fails above its limit, --min below it.
enum class GateBound { max, min };

// --max METRIC=VALUE or --min METRIC=VALUE, optionally for one column:
// --max risk:ece=0.02. Which columns an unnamed gate reads is the caller's
// choice (plumb report: the mapped columns when there are maps).
struct Gate {
  std::string column;  // empty: every score column (build_report)
  std::string metric;  // a name of gate_metrics() or an older spelling (find_gate_metric)
  double limit = 0.0;
  GateBound bound = GateBound::max;
};
struct GateResult {
  Gate gate;
  std::string column;  // the column it was checked on
  double value = 0.0;
  bool exceeded = false;  // failed: beyond its limit, or a value that could not be computed
};

// One night of a figure's trend (plumb report --history): the night's
// value and interval (NaN when it has none), and whether the column's map
// was refitted since the night before (its identity changed).
struct TrendPoint {
  std::string date;  // YYYY-MM-DD, as the history records it
  double value = 0.0;
  double lo = 0.0, hi = 0.0;
  bool refit = false;
};

// A figure of one column over the nights of a history, oldest first (the
// last point is the current run), with the current run's gates on it.
struct TrendSeries {
  std::string column;
  std::string figure;  // a gate metric name (gate_metrics())
  std::vector<TrendPoint> points;
  std::vector<Gate> gates;
};

struct Report {
  std::string source;
  std::string label_column;
  std::string weight_column;   // empty when unweighted
  std::string segment_column;  // empty without --by
  // Rows left out for a missing score or label under --missing skip;
  // nullopt when missing values were refused.
  std::optional<std::uint64_t> rows_skipped;
  ReportOptions options;
  std::vector<ScoreReport> scores;
  std::vector<GateResult> gates;
  std::vector<std::string> cautions;  // plain sentences, in the order found
  // Set by the caller from a history file (io/history.hpp); empty without
  // one. The text, SVG and HTML renderers draw it; the JSON report leaves
  // it out (the history file holds the figures).
  std::vector<TrendSeries> trend;
  bool any_gate_exceeded() const noexcept;
};

// A figure a gate can read: its name (the report's JSON key, or the key
// with its group: ece_mass is calibration_error.equal_mass.ece), which
// bounds make sense for it and what it reads, in words.
struct GateMetric {
  std::string_view name;
  bool max;  // may be bounded above (--max)
  bool min;  // may be bounded below (--min)
  std::string_view reads;
};
// The gate metrics, in the order help lists them: ece, ece_mass, mce,
// l2_debiased, brier, log_loss, mcb, mcb_log (--max only);
// calibration_in_the_large (signed), slope (both bounds); auc,
// hosmer_lemeshow_p, spiegelhalter_p (--min only).
std::span<const GateMetric> gate_metrics() noexcept;
// The metric called `name`: a name of gate_metrics(), or one of the older
// spellings still read (citl: |calibration in the large|, --max only;
// slope_gap: |1 - slope|, --max only; hl_p: hosmer_lemeshow_p). nullptr
// for any other name.
const GateMetric* find_gate_metric(std::string_view name) noexcept;
// The value a gate reads from a summary (NaN when it cannot be computed).
// Precondition: find_gate_metric(metric) is not null.
double gate_value(const ScoreSummary& summary, std::string_view metric);
// The gate checked on one column: exceeded when the value lies beyond the
// limit on the gate's side, or is not a number (a pipeline must not pass
// on a figure it does not have).
GateResult check_gate(const Gate& gate, const ScoreSummary& summary);
// The comparison a gate result shows: ">" or "<=" for --max, "<" or ">="
// for --min (the value against the limit); empty when the value is not a
// number.
std::string_view gate_comparison(const GateResult& result) noexcept;

// One forecast column with its name, for build_report.
struct ForecastColumn {
  std::string name;
  std::span<const double> forecast;  // probabilities in [0, 1]
  // May be null. Else the column's cells already counted (say while the
  // rows were read), equal to make_forecast_cells(forecast, label, weight)
  // except that `order` and `first` may be empty: only for unweighted rows
  // with labels 0 or 1 and no forecast -0, where every cell sum is a count.
  // build_report then does not sort the rows.
  const ForecastCells* cells = nullptr;
};

// Computes the whole report. `label` 0/1, `weight` empty or one per row,
// `segment` empty or one segment index per row into `segment_names`.
// Throws plumb::Error(fit) when the rows have no weight.
Report build_report(std::span<const ForecastColumn> columns, std::span<const double> label,
                    std::span<const double> weight, std::span<const std::uint32_t> segment,
                    std::span<const std::string> segment_names, const std::vector<Gate>& gates,
                    const ReportOptions& options);

// One forecast column given per score (forecast_cells.hpp), as report
// --tally reads it.
struct ForecastCellColumn {
  std::string name;
  TallyCells cells;
};

// The report of the rows the entries stand for, without segments: with
// unit_weights the same report, number for number, as build_report on those
// rows in the entries' order, each entry's label-0 rows first (every
// row-order sum is taken row by row; the calibration regression works on
// per-forecast sums in both). Memory and the rank-based work are
// O(entries): entries sorted by forecast and distinct (a tally's) are read
// in place, without a copy per distinct forecast; the row-order sums are
// O(rows) additions. With weights the sums take each label of an entry once
// with its weight, and the effective sizes read weight_sq; the bootstrap
// then needs each row's weight and options.bootstrap > 0 gives
// Error(usage).
Report build_report_of_cells(std::span<const ForecastCellColumn> columns, const std::vector<Gate>& gates,
                             const ReportOptions& options);

}  // namespace plumb
