#pragma once
// The reliability report of a K-class classifier: multi-class Brier score
// and log loss, accuracy and the confidence gap, top-label (confidence)
// calibration error with its reliability chart, class-wise calibration error
// and a per-class (one-vs-rest) reliability table, with Poisson bootstrap
// intervals. Pure computation on a labelled ClassScores (class_scores.hpp);
// the renderers (io/class_report_render.hpp) turn it into text, JSON, SVG
// and Markdown. docs/methods_metrics.md states every definition.
#include <cstddef>
#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "plumb/binning.hpp"
#include "plumb/class_map.hpp"
#include "plumb/bootstrap.hpp"
#include "plumb/calibration_error.hpp"
#include "plumb/class_scores.hpp"
#include "plumb/goodness_of_fit.hpp"
#include "plumb/pav.hpp"
#include "plumb/reliability.hpp"
#include "plumb/report.hpp"

namespace plumb {

struct ClassReportOptions {
  std::size_t bins = 10;                           // every reliability table and ECE
  BinningKind binning = BinningKind::equal_width;  // of the tables and the chart
  std::size_t bootstrap = 200;                     // replicates; 0: no intervals and no band
  std::uint64_t seed = 1;
  double confidence = 0.95;                        // every interval and the band
  std::size_t histogram_bins = 50;                 // equal-width histogram of the confidence
  std::size_t threads = 0;                         // bootstrap threads (0: one per core); never changes a number
};

// One class taken one-vs-rest: forecast p_k, label 1{label == k}.
struct ClassSummary {
  std::string name;
  std::uint64_t rows = 0;        // rows labelled with this class
  double weight = 0.0;           // their weight
  double observed_rate = 0.0;    // weight / total weight
  double mean_forecast = 0.0;    // weighted mean of p_k over all rows
  double calibration_in_the_large = 0.0;  // mean_forecast - observed_rate
  CalibrationError ece_equal_width;       // of p_k against the indicator, `bins` bins each
  CalibrationError ece_equal_mass;
  ReliabilityTable table;                 // options.binning, options.bins
  std::vector<double> histogram;          // weight of p_k in histogram_bins equal-width bins of [0, 1]
};

// Percentile intervals (bootstrap.hpp's conventions) of the headline figures.
struct ClassBootstrapResult {
  BootstrapInterval brier;
  BootstrapInterval log_loss;
  BootstrapInterval accuracy;
  BootstrapInterval confidence_gap;
  BootstrapInterval top_label_ece;  // equal-width bins, as the binary report's ECE interval
  BootstrapInterval classwise_ece;  // equal-width bins
};

// Where a model's probabilities came from when a multi-class map made them
// from the scores as read (report --scores COLS --map FILE): the artifact's
// identity (its integrity hash changes with every refit) and provenance.
struct ClassMapOrigin {
  std::string file;       // as given on the command line
  std::string kind;       // temperature, vector, dirichlet, one_vs_rest
  std::string integrity;  // the artifact's integrity hash
  std::string created_utc;
  std::string tool;
  std::string fitted_source;
  std::string fitted_sha256;
  std::uint64_t fitted_rows = 0;
};

// The headline figures of one model within one segment of the rows
// (report --scores --by COL): its rows as a K-class report would give them,
// the ECEs over options.bins equal-width bins.
struct ClassSegmentSummary {
  std::string value;  // the segment column's value
  std::uint64_t rows = 0;
  double weight = 0.0;
  bool too_few = false;  // weight < the minimum segment weight: only rows and weight are set
  double brier = 0.0;
  double log_loss = 0.0;
  double accuracy = 0.0;
  double confidence_gap = 0.0;
  double top_label_ece = 0.0;
  double classwise_ece = 0.0;
  // Spiegelhalter's (1986) Z of the confidence against the indicator that
  // the top label is right: the top label's calibration as a test.
  SpiegelhalterZ spiegelhalter;
  double p_adjusted = 1.0;  // Holm (1979) over the segments that have a number
  bool flagged = false;     // p_adjusted < alpha
};

// Every segment of `segment` (one index per row into `names`) for the rows
// of `scores` (as build_class_report takes them), sorted by |confidence
// gap|, largest first; segments of weight below `min_weight` (too few) last,
// by value. Flags at family-wise level `alpha`. Throws Error(internal) when
// `segment` is not one valid index per row; the rest as build_class_report.
std::vector<ClassSegmentSummary> class_segments(const ClassScores& scores, std::span<const std::uint32_t> segment,
                                                std::span<const std::string> names, const ClassReportOptions& options,
                                                double min_weight, double alpha = 0.05);

struct ClassReport {
  // Set by the caller (the CLI) for the renderers; build_class_report leaves
  // them empty.
  std::string name;                     // the model's name when several are reported side by side
  std::optional<ClassMapOrigin> map;    // set when a map made the probabilities
  std::string source;
  std::string label_column;
  std::string weight_column;
  std::vector<std::string> score_columns;  // one per class, in class order
  std::string segment_column;              // empty without --by
  std::vector<ClassSegmentSummary> segments;  // class_segments' order; empty without --by
  double min_segment_weight = 100.0;       // of the segments' too-few rule
  double segment_alpha = 0.05;             // of their flags
  // Rows left out for a missing score or label under --missing skip;
  // nullopt when missing values were refused.
  std::optional<std::uint64_t> rows_skipped;

  ClassReportOptions options;
  ClassScale scale = ClassScale::probability;  // of the input; logits were turned to probabilities by softmax
  std::uint64_t rows = 0;
  double weight = 0.0;

  // Brier (1950) in its multi-class form: per row sum_k (p_k - y_k)^2, the
  // weighted mean over rows. Range [0, 2]; 0 for a certain, right forecast.
  double brier = 0.0;
  // Weighted mean of -ln p_label (nats), p_label clipped below at
  // probability_clip (scale.hpp) as the binary log loss is.
  double log_loss = 0.0;
  // Top label: the class of the largest probability (the first of equal
  // largest ones, in class order); confidence: that probability.
  double accuracy = 0.0;          // weighted share of rows whose top label is the label
  double mean_confidence = 0.0;   // weighted mean confidence
  double confidence_gap = 0.0;    // mean_confidence - accuracy (> 0: over-confident)
  // Top-label (confidence) calibration error (Guo, Pleiss, Sun and
  // Weinberger 2017): the binary ECE of the confidence against the
  // indicator that the top label is right, `bins` bins of each kind.
  CalibrationError top_label_equal_width;
  CalibrationError top_label_equal_mass;
  // The top-label reliability chart's data: table in options.binning, its
  // consistency band (bootstrap.hpp; empty without bootstrap), the PAV curve
  // of correctness on confidence and the confidence histogram over
  // histogram_bins equal-width bins of [0, 1].
  ReliabilityTable top_label_table;
  std::vector<Interval> top_label_band;
  std::vector<PavBlock> top_label_pav;
  std::vector<double> confidence_histogram;
  // Class-wise ECE (Kull et al. 2019, their classwise-ECE): the mean over
  // all K classes, unweighted, of each class's one-vs-rest ECE; a class no
  // row is labelled with counts too (its ECE is then its mean forecast).
  double classwise_ece_equal_width = 0.0;
  double classwise_ece_equal_mass = 0.0;
  std::vector<ClassSummary> classes;  // in class order

  std::uint64_t true_class_at_zero = 0;  // rows whose label's probability is 0 (log loss clipped)
  std::optional<ClassBootstrapResult> bootstrap;  // absent when options.bootstrap == 0
  std::vector<std::string> cautions;              // plain sentences, in the order found
  std::vector<GateResult> gates;                  // set by the caller (check_class_gate); column empty
  bool any_gate_exceeded() const noexcept;
};

// Computes the report. `scores` must be labelled (label.size() == rows) with
// K >= 2 classes, every label < K, weights empty or one per row (finite,
// >= 0). On the probability scale every value must lie in [0, 1] (the reader
// has checked the sums); on the logit scale every value must be finite and
// rows are turned into probabilities by softmax first.
// Throws Error(internal) for a ClassScores that breaks these (the reader
// refuses such input, located, before), Error(usage) for bins == 0 or a
// confidence outside (0, 1), Error(fit) when the rows have no weight.
// A class with no rows is cautioned, not refused. Every number is the same
// for any options.threads.
ClassReport build_class_report(const ClassScores& scores, const ClassReportOptions& options);

// Several models of the same labelled rows reported side by side (report
// --scores COLS --map FILE ...): the scores as read, then the model of each
// map, each a whole ClassReport with its own name. `gates` holds every
// gate's result on every model it reads, in the order of the gates, then of
// the models; each result's column is the model's name. The renderers'
// overloads for one ClassReport render a set of that one model with its
// own gates.
struct ClassReportSet {
  std::vector<ClassReport> models;
  std::vector<GateResult> gates;
  bool any_gate_exceeded() const noexcept;
  // Every model's cautions for a reader: a caution every model gives (the
  // rows' own, such as a class with few rows) once, as it is; then each
  // model's others as "NAME: caution", in model order. With one model, its
  // cautions as they are.
  std::vector<std::string> cautions() const;
};

// The rows of `scores` as `map` calibrates them: the same labels and
// weights, the scale probability, and each row's K values replaced by
// map.map of them (the very doubles plumb apply writes for the map, which
// reads them back exactly). `floored` receives the rows on which the map
// raised a probability to class_probability_floor. Precondition: the map's
// classes and scale are those of `scores` (the caller checks and refuses,
// located, before); Error(internal) otherwise.
ClassScores calibrate_class_scores(const ClassCalibrationMap& map, const ClassScores& scores,
                                   std::uint64_t* floored = nullptr);

// The figures a gate (--max/--min) can read on a multi-class report, named
// by their JSON keys (the ECEs with their binning): brier, log_loss,
// top_label_ece, top_label_ece_mass, classwise_ece, classwise_ece_mass
// (--max only), confidence_gap (signed, both bounds) and accuracy (--min
// only). A gate reads the model as a whole, so it names no column.
std::span<const GateMetric> class_gate_metrics() noexcept;
// The metric called `name`, or nullptr.
const GateMetric* find_class_gate_metric(std::string_view name) noexcept;
// The value a gate reads (NaN when it cannot be computed). Precondition:
// find_class_gate_metric(metric) is not null.
double class_gate_value(const ClassReport& report, std::string_view metric);
// The gate checked: exceeded when the value lies beyond the limit on the
// gate's side or is not a number, as check_gate (report.hpp).
GateResult check_class_gate(const Gate& gate, const ClassReport& report);

}  // namespace plumb
