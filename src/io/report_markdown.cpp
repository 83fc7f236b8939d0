// Markdown rendering of a Report, for pasting into a review: per score column
// the headline metrics, the score decompositions, the reliability table and
// the segments; then the gates, the cautions found and the standing cautions.
//
// Conventions: every table row has the header's cell count (a reader or a
// diff tool can rely on it); numbers follow the formatting layer's rules and
// figures its Markdown labels (report_names.hpp), so they read as in the text
// report; non-finite numbers print as "n/a"; text that
// comes from the data (names, values, cautions) is escaped so that it shows
// literally instead of becoming Markdown (a `|` would otherwise split a cell).
#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "plumb/io/class_report_render.hpp"
#include "plumb/io/report_render.hpp"
#include "report_names.hpp"

namespace plumb {
namespace {

namespace rn = report_names;

bool finite(double x) { return std::isfinite(x); }
std::string na() { return std::string(not_a_number); }
std::string label(const rn::Name& n) { return std::string(n.markdown); }

// Backslash-escapes the ASCII punctuation that Markdown (CommonMark and the
// common table extension) could read as syntax, and folds line breaks into
// spaces so a value never ends a table row early.
std::string md(std::string_view text) {
  std::string out;
  out.reserve(text.size() + 8);
  for (const char c : text) {
    if (c == '\n' || c == '\r' || c == '\t') {
      out += ' ';
      continue;
    }
    if (std::string_view("\\`*_[]<>|#~!&").find(c) != std::string_view::npos) out += '\\';
    out += c;
  }
  return out;
}

// A table with a fixed column count: rows are padded or cut to the header's
// width so the output is always a well-formed pipe table.
class Table {
 public:
  Table(std::vector<std::string> header, std::vector<bool> right_aligned)
      : header_(std::move(header)), right_(std::move(right_aligned)) {
    right_.resize(header_.size(), false);
  }
  void row(std::vector<std::string> cells) {
    cells.resize(header_.size());
    rows_.push_back(std::move(cells));
  }
  void write(std::string& out) const {
    write_row(out, header_);
    out += '|';
    for (std::size_t c = 0; c < header_.size(); ++c) out += right_[c] ? " ---: |" : " --- |";
    out += '\n';
    for (const auto& r : rows_) write_row(out, r);
    out += '\n';
  }

 private:
  static void write_row(std::string& out, const std::vector<std::string>& cells) {
    out += '|';
    for (const std::string& c : cells) out += ' ' + c + " |";
    out += '\n';
  }
  std::vector<std::string> header_;
  std::vector<bool> right_;
  std::vector<std::vector<std::string>> rows_;
};

std::string bootstrap_interval(const BootstrapInterval& i) {
  if (i.used == 0 || !finite(i.lo) || !finite(i.hi)) return na();
  return interval_text(metric_text(i.lo), metric_text(i.hi));
}

std::string binning_name(BinningKind kind) { return label(rn::binning(kind)); }

void headline(std::string& out, const Report& report, const ScoreSummary& s) {
  const bool boot = s.bootstrap.has_value();
  const std::string level = percent_text(report.options.confidence);
  std::vector<std::string> header{"metric", "value"};
  if (boot) header.push_back(level + " interval");
  Table t(header, {false, true, false});
  const auto add = [&](std::string name, std::string value, const BootstrapInterval* interval = nullptr) {
    std::vector<std::string> cells{std::move(name), std::move(value)};
    if (boot) cells.push_back(interval != nullptr ? bootstrap_interval(*interval) : "");
    t.row(std::move(cells));
  };
  const BootstrapResult* b = boot ? &*s.bootstrap : nullptr;
  // The bootstrap re-makes the table's binning in each replicate, so its ECE
  // and debiased l2 intervals belong to that binning's rows only.
  const bool mass = report.options.binning == BinningKind::equal_mass;

  add(label(rn::rows), count_text(s.rows));
  if (!report.weight_column.empty()) add(label(rn::weight), weight_text(s.weight));
  add(label(rn::positives), weight_text(s.positives));
  add(label(rn::observed_rate), probability_text(s.observed_rate));
  add(label(rn::mean_forecast), probability_text(s.mean_forecast));
  add(label(rn::brier), metric_text(s.brier), b ? &b->brier : nullptr);
  add(label(rn::log_loss), metric_text(s.log_loss));
  add(label(rn::brier_mcb), metric_text(s.corp_brier.mcb), b ? &b->mcb_brier : nullptr);
  add(label(rn::brier_dsc), metric_text(s.corp_brier.dsc));
  add(label(rn::brier_unc), metric_text(s.corp_brier.unc));
  add(label(rn::log_loss_terms), metric_text(s.corp_log_loss.mcb) + " / " + metric_text(s.corp_log_loss.dsc) + " / " +
                                     metric_text(s.corp_log_loss.unc));
  for (const CalibrationError* e : {&s.ece_equal_width, &s.ece_equal_mass}) {
    const bool matches = (e->binning == BinningKind::equal_mass) == mass;
    const std::string bins = binning_name(e->binning) + ", " + count_text(e->bins) + " bins (" +
                             count_text(e->nonempty_bins) + " non-empty)";
    add(label(rn::ece) + ", " + bins, metric_text(e->ece), b && matches ? &b->ece : nullptr);
    add(label(rn::mce) + ", " + binning_name(e->binning), metric_text(e->mce));
    add(label(rn::l2_debiased) + ", " + binning_name(e->binning), metric_text(e->l2_debiased),
        b && matches ? &b->l2_debiased : nullptr);
  }
  add(label(rn::calibration_in_the_large), difference_text(s.calibration_in_the_large));
  const std::string caveat = s.regression.converged ? "" : " (fit did not converge)";
  add(label(rn::calibration_slope) + caveat, fixed_text(s.regression.slope, 4));
  add(label(rn::intercept_slope_free) + caveat, difference_text(s.regression.intercept_free));
  add(label(rn::calibration_intercept) + caveat, difference_text(s.regression.intercept_at_unit_slope));
  const HosmerLemeshow& hl = s.hosmer_lemeshow;
  const std::string hl_name = label(rn::hosmer_lemeshow);
  add(hl_name + " statistic (" + count_text(hl.used_groups) + " of " + count_text(hl.groups_requested) + " groups)",
      stat_text(hl.statistic));
  add(hl_name + " df", fixed_text(hl.df, 0));
  add(label(rn::hosmer_lemeshow_p), p_value_text(hl.p_value));
  add(label(rn::spiegelhalter), stat_text(s.spiegelhalter.z));
  add(label(rn::spiegelhalter_p), p_value_text(s.spiegelhalter.p_value));
  add(label(rn::auc), metric_text(s.auc), b ? &b->auc : nullptr);
  if (s.at_zero_or_one > 0) add(label(rn::at_zero_or_one), count_text(s.at_zero_or_one));
  if (s.interval_width) {
    add(label(rn::interval_width) + ", mean", metric_text(s.interval_width->mean));
    add(label(rn::interval_width) + ", median", metric_text(s.interval_width->median));
    add(label(rn::interval_width) + ", 90th percentile", metric_text(s.interval_width->p90));
  }
  t.write(out);
}

void reliability(std::string& out, const Report& report, const ScoreSummary& s) {
  const ReliabilityTable& table = s.table;
  const bool weighted = !report.weight_column.empty();
  const bool band = !s.band.empty();
  std::vector<std::string> header{"bin", "range", label(rn::rows)};
  if (weighted) header.insert(header.end(), {label(rn::weight), label(rn::effective_size)});
  header.insert(header.end(), {label(rn::mean_forecast), "observed",
                               percent_text(table.confidence) + " Wilson interval", label(rn::gap)});
  if (band) header.push_back(percent_text(report.options.confidence) + " " + label(rn::consistency_band));
  std::vector<bool> right(header.size(), true);
  right[1] = false;
  Table t(header, right);
  for (std::size_t b = 0; b < table.bins.size(); ++b) {
    const ReliabilityBin& bin = table.bins[b];
    const std::string range = finite(bin.edge_lo) && finite(bin.edge_hi)
                                  ? range_text(probability_text(bin.edge_lo), probability_text(bin.edge_hi))
                                  : na();
    // The bin's number is its place, not a count.
    std::vector<std::string> cells{std::to_string(b + 1), range, count_text(bin.rows)};
    if (weighted) cells.insert(cells.end(), {weight_text(bin.weight), weight_text(bin.effective_size)});
    const bool has = bin.weight > 0;
    cells.push_back(has ? probability_text(bin.mean_forecast) : na());
    cells.push_back(has ? probability_text(bin.observed) : na());
    cells.push_back(has && finite(bin.observed_lo) && finite(bin.observed_hi)
                        ? interval_text(probability_text(bin.observed_lo), probability_text(bin.observed_hi))
                        : na());
    cells.push_back(has ? difference_text(bin.gap) : na());
    if (band) {
      const bool in_range = b < s.band.size() && finite(s.band[b].lo) && finite(s.band[b].hi);
      cells.push_back(in_range ? interval_text(probability_text(s.band[b].lo), probability_text(s.band[b].hi)) : na());
    }
    t.row(std::move(cells));
  }
  out += "Reliability table (" + binning_name(table.binning) + " bins; gap > 0: forecasts too high):\n\n";
  t.write(out);
}

void segments(std::string& out, const Report& report, const ScoreReport& r) {
  if (r.segments.empty()) return;
  out += "### Segments by " + md(report.segment_column) + "\n\n";
  out +=
      "Sorted by |calibration in the large|. A segment is flagged when its Spiegelhalter p-value, Holm-adjusted "
      "over the segments, is below " +
      significant_text(report.options.segment_alpha, 4) + "; segments under " +
      weight_text(report.options.min_segment_weight) + " weight have too few rows for figures.\n\n";
  const std::vector<bool> shown = rn::segments_shown(r.segments);
  const auto left_out = static_cast<std::size_t>(std::count(shown.begin(), shown.end(), false));
  Table t({"segment", label(rn::rows), label(rn::weight), "positives", label(rn::mean_forecast), "observed",
           "calibration in the large", label(rn::ece), "Brier", "log loss", label(rn::spiegelhalter), label(rn::holm_p),
           "flag"},
          {false, true, true, true, true, true, true, true, true, true, true, true, false});
  for (std::size_t i = 0; i < r.segments.size(); ++i) {
    if (!shown[i]) continue;
    const SegmentSummary& g = r.segments[i];
    std::vector<std::string> cells{md(g.value), count_text(g.rows), weight_text(g.weight), weight_text(g.positives)};
    if (g.too_few) {
      // Only rows, weight and positives are computed (report.hpp); the row
      // is padded to the header's width by Table.
      cells.push_back("too few rows");
    } else {
      cells.insert(cells.end(), {probability_text(g.mean_forecast), probability_text(g.observed_rate),
                                 difference_text(g.calibration_in_the_large), metric_text(g.ece), metric_text(g.brier),
                                 metric_text(g.log_loss), stat_text(g.spiegelhalter.z), p_value_text(g.p_adjusted),
                                 g.flagged ? "**flagged**" : "no"});
    }
    t.row(std::move(cells));
  }
  t.write(out);
  if (left_out > 0)
    out += count_text(left_out) + " smaller segment" + (left_out == 1 ? "" : "s") +
           " not shown (none flagged; every segment is in the JSON report).\n\n";
}

void gates(std::string& out, const Report& report) {
  out += "## Gates\n\n";
  if (report.gates.empty()) {
    out += "No gates were set.\n\n";
    return;
  }
  Table t({"column", "metric", "limit", "value", "result"}, {false, false, true, true, false});
  std::size_t failed = 0;
  for (const GateResult& g : report.gates) {
    failed += g.exceeded ? 1 : 0;
    t.row({md(g.column), md(g.gate.metric),
           (g.gate.bound == GateBound::max ? "at most " : "at least ") + significant_text(g.gate.limit, 6),
           significant_text(g.value, 6), g.exceeded ? "**FAIL**" : "pass"});
  }
  out += failed == 0 ? "Every gate passed.\n\n"
                     : count_text(failed) + " of " + count_text(report.gates.size()) + " gates failed.\n\n";
  t.write(out);
}

constexpr std::string_view standing_caution =
    "A recalibration map fitted on past data holds only while the population and the model stay the same; "
    "check it again when either changes. Recalibration is not model validation: it makes the probabilities "
    "honest on these rows, not the model sound. Regulated and clinical uses (credit, insurance, health) "
    "follow local rules and licensed practice.\n";

}  // namespace

std::string render_markdown(const Report& report) {
  std::string out;
  out.reserve(4096 + report.scores.size() * 8192);
  out += "# Reliability report: " + md(report.source) + "\n\n";
  const std::uint64_t rows = report.scores.empty() ? 0 : report.scores.front().overall.rows;
  out += "- Rows: " + count_text(rows) + "\n";
  if (report.rows_skipped)
    out += "- Rows left out for a missing score or label: " + count_text(*report.rows_skipped) + "\n";
  out += "- Label column: " + md(report.label_column) + "\n";
  out += "- Weight column: " + (report.weight_column.empty() ? std::string("none") : md(report.weight_column)) + "\n";
  out +=
      "- Segment column: " + (report.segment_column.empty() ? std::string("none") : md(report.segment_column)) + "\n";
  const ReportOptions& o = report.options;
  out += "- Bins: " + count_text(o.bins) + ", " + binning_name(o.binning) + "; " + label(rn::hosmer_lemeshow) +
         " groups: " + count_text(o.hl_groups) + "\n";
  if (o.bootstrap > 0) {
    // The seed is a name for the random stream, not a count: plain digits.
    out += "- Intervals: " + percent_text(o.confidence) + " percentile intervals from " + count_text(o.bootstrap) +
           " Poisson bootstrap replicates (seed " + std::to_string(o.seed) + ")\n";
  } else {
    out += "- Intervals: none (no bootstrap replicates)\n";
  }
  out += "\n";

  for (const ScoreReport& r : report.scores) {
    out += "## " + md(r.overall.name) + "\n\n";
    headline(out, report, r.overall);
    reliability(out, report, r.overall);
    segments(out, report, r);
  }

  gates(out, report);

  out += "## Cautions\n\n";
  for (const std::string& c : report.cautions) out += "- " + md(c) + "\n";
  if (!report.cautions.empty()) out += "\n";
  out += standing_caution;
  return out;
}

namespace {

// A reliability table of the multi-class report; `forecast` and `observed`
// name its two columns (the top label's are confidence and accuracy).
void class_reliability(std::string& out, const ClassReport& report, const ReliabilityTable& table,
                       const std::vector<Interval>& band_of, const std::string& forecast, const std::string& observed) {
  const bool weighted = !report.weight_column.empty();
  const bool band = !band_of.empty();
  std::vector<std::string> header{"bin", "range", label(rn::rows)};
  if (weighted) header.insert(header.end(), {label(rn::weight), label(rn::effective_size)});
  header.insert(header.end(), {forecast, observed, percent_text(table.confidence) + " Wilson interval", label(rn::gap)});
  if (band) header.push_back(percent_text(report.options.confidence) + " " + label(rn::consistency_band));
  std::vector<bool> right(header.size(), true);
  right[1] = false;
  Table t(header, right);
  for (std::size_t b = 0; b < table.bins.size(); ++b) {
    const ReliabilityBin& bin = table.bins[b];
    const std::string range = finite(bin.edge_lo) && finite(bin.edge_hi)
                                  ? range_text(probability_text(bin.edge_lo), probability_text(bin.edge_hi))
                                  : na();
    std::vector<std::string> cells{std::to_string(b + 1), range, count_text(bin.rows)};
    if (weighted) cells.insert(cells.end(), {weight_text(bin.weight), weight_text(bin.effective_size)});
    const bool has = bin.weight > 0;
    cells.push_back(has ? probability_text(bin.mean_forecast) : na());
    cells.push_back(has ? probability_text(bin.observed) : na());
    cells.push_back(has && finite(bin.observed_lo) && finite(bin.observed_hi)
                        ? interval_text(probability_text(bin.observed_lo), probability_text(bin.observed_hi))
                        : na());
    cells.push_back(has ? difference_text(bin.gap) : na());
    if (band) {
      const bool in_range = b < band_of.size() && finite(band_of[b].lo) && finite(band_of[b].hi);
      cells.push_back(in_range ? interval_text(probability_text(band_of[b].lo), probability_text(band_of[b].hi)) : na());
    }
    t.row(std::move(cells));
  }
  t.write(out);
}

}  // namespace

namespace {

// One model's sections: headline figures, top label, classes; `h` is the
// heading mark of its sections ("##" alone, "###" under a model's heading).
void class_model_sections(std::string& out, const ClassReport& report, const std::string& h) {
  const ClassReportOptions& o = report.options;
  out += h + " Headline figures\n\n";
  const ClassBootstrapResult* b = report.bootstrap ? &*report.bootstrap : nullptr;
  const auto iv = [&](const BootstrapInterval ClassBootstrapResult::*which, std::string (*rule)(double)) {
    if (!b) return na();
    const BootstrapInterval& i = b->*which;
    return finite(i.lo) && finite(i.hi) ? interval_text(rule(i.lo), rule(i.hi)) : na();
  };
  Table t({"figure", "value", percent_text(o.confidence) + " interval"}, {false, true, true});
  const std::string bins = ", " + count_text(o.bins) + " bins";
  t.row({label(rn::class_brier), metric_text(report.brier), iv(&ClassBootstrapResult::brier, metric_text)});
  t.row({label(rn::class_log_loss), metric_text(report.log_loss), iv(&ClassBootstrapResult::log_loss, metric_text)});
  t.row({label(rn::accuracy), probability_text(report.accuracy),
         iv(&ClassBootstrapResult::accuracy, probability_text)});
  t.row({label(rn::mean_confidence), probability_text(report.mean_confidence), na()});
  t.row({label(rn::confidence_gap), difference_text(report.confidence_gap),
         iv(&ClassBootstrapResult::confidence_gap, difference_text)});
  t.row({label(rn::top_label_ece) + ", " + label(rn::equal_width) + bins, metric_text(report.top_label_equal_width.ece),
         iv(&ClassBootstrapResult::top_label_ece, metric_text)});
  t.row({label(rn::top_label_ece) + ", " + label(rn::equal_mass) + bins, metric_text(report.top_label_equal_mass.ece),
         na()});
  t.row({label(rn::classwise_ece) + ", " + label(rn::equal_width) + bins, metric_text(report.classwise_ece_equal_width),
         iv(&ClassBootstrapResult::classwise_ece, metric_text)});
  t.row({label(rn::classwise_ece) + ", " + label(rn::equal_mass) + bins, metric_text(report.classwise_ece_equal_mass),
         na()});
  if (report.true_class_at_zero > 0)
    t.row({label(rn::label_probability_zero), count_text(report.true_class_at_zero), na()});
  t.write(out);

  out += h + " Top label\n\n";
  out += "Reliability of the confidence (the top label's probability; " + binning_name(report.top_label_table.binning) +
         " bins; accuracy: share of the bin's rows whose top label is right; gap > 0: over-confident):\n\n";
  class_reliability(out, report, report.top_label_table, report.top_label_band, "mean confidence", "accuracy");

  out += h + " Classes, one-vs-rest\n\n";
  Table c({label(rn::class_name), label(rn::rows), label(rn::class_share), label(rn::mean_forecast), label(rn::gap),
           label(rn::ece) + ", " + label(rn::equal_width), label(rn::ece) + ", " + label(rn::equal_mass)},
          {false, true, true, true, true, true, true});
  for (const ClassSummary& k : report.classes)
    c.row({md(k.name), count_text(k.rows), probability_text(k.observed_rate), probability_text(k.mean_forecast),
           difference_text(k.calibration_in_the_large), metric_text(k.ece_equal_width.ece),
           metric_text(k.ece_equal_mass.ece)});
  c.write(out);
  for (const ClassSummary& k : report.classes) {
    out += h + "# Class " + md(k.name) + "\n\n";
    out += "Reliability of its probability against its indicator (" + binning_name(k.table.binning) +
           " bins; gap > 0: forecasts too high):\n\n";
    class_reliability(out, report, k.table, {}, label(rn::mean_forecast), "observed");
  }
  if (report.segment_column.empty()) return;
  out += h + " Segments by " + md(report.segment_column) + "\n\n";
  std::size_t flagged = 0;
  for (const ClassSegmentSummary& g : report.segments) flagged += g.flagged ? 1 : 0;
  out += "Flag: Holm-adjusted p of Spiegelhalter's Z of the confidence against a right top label below " +
         significant_text(report.segment_alpha, 4) + " (" + count_text(flagged) + " of " +
         count_text(report.segments.size()) + " segments); ECEs over " + count_text(o.bins) + " " +
         label(rn::equal_width) + " bins.\n\n";
  Table g({md(report.segment_column), label(rn::rows), "Brier", "log loss", label(rn::accuracy), label(rn::confidence_gap),
           label(rn::top_label_ece), label(rn::classwise_ece), label(rn::holm_p), "flag"},
          {false, true, true, true, true, true, true, true, true, false});
  const std::vector<bool> shown = rn::segments_shown(report.segments);
  std::size_t left_out = 0;
  for (std::size_t i = 0; i < report.segments.size(); ++i) {
    const ClassSegmentSummary& seg = report.segments[i];
    if (!shown[i]) {
      ++left_out;
      continue;
    }
    if (seg.too_few) {
      g.row({md(seg.value), count_text(seg.rows), na(), na(), na(), na(), na(), na(), na(), "too few rows"});
      continue;
    }
    g.row({md(seg.value), count_text(seg.rows), metric_text(seg.brier), metric_text(seg.log_loss),
           probability_text(seg.accuracy), difference_text(seg.confidence_gap), metric_text(seg.top_label_ece),
           metric_text(seg.classwise_ece), p_value_text(seg.p_adjusted), seg.flagged ? "**!**" : ""});
  }
  g.write(out);
  if (left_out > 0)
    out += count_text(left_out) + " smaller segment" + (left_out == 1 ? "" : "s") +
           " not shown (none flagged; every segment is in the JSON report).\n\n";
}

}  // namespace

std::string render_class_markdown(const ClassReport& report) {
  ClassReportSet set;
  set.models.push_back(report);
  set.gates = report.gates;
  return render_class_markdown(set);
}

std::string render_class_markdown(const ClassReportSet& set) {
  std::string out;
  if (set.models.empty()) return out;
  const ClassReport& report = set.models.front();
  const bool several = set.models.size() > 1 || report.map;
  const ClassReportOptions& o = report.options;
  out.reserve(8192 + set.models.size() * report.classes.size() * 4096);
  out += "# Multi-class reliability report: " + md(report.source) + "\n\n";
  out += "- Rows: " + count_text(report.rows) + "\n";
  if (report.rows_skipped)
    out += "- Rows left out for a missing score or label: " + count_text(*report.rows_skipped) + "\n";
  out += "- Classes: " + count_text(report.classes.size()) + "\n";
  out += "- Label column: " + md(report.label_column) + "\n";
  out += "- Weight column: " + (report.weight_column.empty() ? std::string("none") : md(report.weight_column)) + "\n";
  if (report.scale == ClassScale::logit) out += "- Scores: logits, turned to probabilities by softmax\n";
  out += "- Bins: " + count_text(o.bins) + ", " + binning_name(o.binning) + "\n";
  if (o.bootstrap > 0)
    out += "- Intervals: " + percent_text(o.confidence) + " percentile intervals from " + count_text(o.bootstrap) +
           " Poisson bootstrap replicates (seed " + std::to_string(o.seed) + ")\n";
  else
    out += "- Intervals: none (no bootstrap replicates)\n";
  out += "\n";
  if (!several) {
    class_model_sections(out, report, "##");
  } else {
    out += "## Models side by side\n\n";
    out += "The scores as read, then each map's model of them; ECEs over " + count_text(o.bins) + " " +
           label(rn::equal_width) + " bins.\n\n";
    Table m({"model", "map", label(rn::class_brier), label(rn::class_log_loss), label(rn::accuracy),
             label(rn::confidence_gap), label(rn::top_label_ece), label(rn::classwise_ece)},
            {false, false, true, true, true, true, true, true});
    for (const ClassReport& r : set.models)
      m.row({md(r.name), r.map ? md(r.map->kind + " (" + r.map->file + ")") : std::string("none"),
             metric_text(r.brier), metric_text(r.log_loss), probability_text(r.accuracy),
             difference_text(r.confidence_gap), metric_text(r.top_label_equal_width.ece),
             metric_text(r.classwise_ece_equal_width)});
    m.write(out);
    for (const ClassReport& r : set.models) {
      out += "## Model " + md(r.name) + "\n\n";
      if (r.map)
        out += "A " + md(r.map->kind) + " map (" + md(r.map->file) + ", fitted on " + md(r.map->fitted_source) +
               ", " + count_text(r.map->fitted_rows) + " rows) applied to the scores as read.\n\n";
      class_model_sections(out, r, "###");
    }
  }

  if (!set.gates.empty()) {
    out += "## Gates\n\n";
    std::size_t failed = 0;
    std::vector<std::string> head{"metric", "limit", "value", "result"};
    std::vector<bool> right{false, true, true, false};
    if (several) {
      head.insert(head.begin(), "model");
      right.insert(right.begin(), false);
    }
    Table g(head, right);
    for (const GateResult& r : set.gates) {
      failed += r.exceeded ? 1 : 0;
      std::vector<std::string> cells{md(r.gate.metric),
                                     (r.gate.bound == GateBound::max ? "at most " : "at least ") +
                                         significant_text(r.gate.limit, 6),
                                     significant_text(r.value, 6), r.exceeded ? "**FAIL**" : "pass"};
      if (several) cells.insert(cells.begin(), md(r.column));
      g.row(std::move(cells));
    }
    out += failed == 0 ? "Every gate passed.\n\n"
                       : count_text(failed) + " of " + count_text(set.gates.size()) + " gates failed.\n\n";
    g.write(out);
  }

  out += "## Cautions\n\n";
  const std::vector<std::string> cautions = set.cautions();
  for (const std::string& caution : cautions) out += "- " + md(caution) + "\n";
  if (!cautions.empty()) out += "\n";
  out += standing_caution;
  return out;
}

}  // namespace plumb
