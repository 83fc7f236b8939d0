// The terminal renderer of a multi-class report (class_report_render.hpp):
// the heading, the headline figures, the top-label reliability table and
// chart, the per-class table, each class's reliability table and the
// cautions. Lines, tables and the chart are the binary report's
// (text_layout.hpp, text_chart.hpp); names and numbers come from the
// formatting layer.
#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "plumb/io/class_report_render.hpp"
#include "report_names.hpp"
#include "text_chart.hpp"
#include "text_layout.hpp"

namespace plumb {
namespace {

namespace rn = report_names;
using text::Column;
using text::Document;
using text::pad;
using text::Painter;
using text::render_table;
using text::Row;
using text::Tone;
using text::visible_width;

std::string with_interval(std::string value, const std::optional<ClassBootstrapResult>& b,
                          BootstrapInterval ClassBootstrapResult::*which,
                          std::string (*rule)(double)) {
  if (b) {
    const BootstrapInterval& i = (*b).*which;
    value += " " + interval_text(rule(i.lo), rule(i.hi));
  }
  return value;
}

void render_heading(Document& doc, const Painter& p, const ClassReport& r) {
  doc.line(p.paint("plumb report", Tone::bold) + std::string(p.dot_sep()) + r.source);
  std::vector<std::string> facts;
  facts.push_back(count_text(r.rows) + " rows");
  if (r.rows_skipped) facts.push_back(count_text(*r.rows_skipped) + " left out for a missing score or label");
  facts.push_back(count_text(r.classes.size()) + " classes");
  facts.push_back("label " + r.label_column);
  if (r.weight_column.empty()) {
    facts.push_back("unweighted");
  } else {
    facts.push_back("weight " + r.weight_column);
    facts.push_back("total weight " + weight_text(r.weight));
  }
  if (r.scale == ClassScale::logit) facts.push_back("logits turned to probabilities by softmax");
  doc.flow(facts, p.dot_sep(), 2);
}

void render_headlines(Document& doc, const ClassReport& r, const std::string& of = {}) {
  doc.heading("headline figures" + of);
  if (r.bootstrap)
    doc.wrap("[lo, hi]: " + percent_text(r.options.confidence) + " bootstrap percentile interval, " +
                 count_text(r.options.bootstrap) + " replicates",
             "  ", "  ");
  const auto& b = r.bootstrap;
  const std::string bins = ", " + count_text(r.options.bins) + " bins";
  const std::string width = " " + std::string(rn::equal_width.text), mass = " " + std::string(rn::equal_mass.text);
  std::vector<std::pair<std::string, std::string>> rows = {
      {std::string(rn::class_brier.text),
       with_interval(metric_text(r.brier), b, &ClassBootstrapResult::brier, metric_text)},
      {std::string(rn::class_log_loss.text),
       with_interval(metric_text(r.log_loss), b, &ClassBootstrapResult::log_loss, metric_text)},
      {std::string(rn::accuracy.text),
       with_interval(probability_text(r.accuracy), b, &ClassBootstrapResult::accuracy, probability_text)},
      {std::string(rn::mean_confidence.text), probability_text(r.mean_confidence)},
      {std::string(rn::confidence_gap.text),
       with_interval(difference_text(r.confidence_gap), b, &ClassBootstrapResult::confidence_gap, difference_text)},
      {std::string(rn::top_label_ece.text) + width + bins,
       with_interval(metric_text(r.top_label_equal_width.ece), b, &ClassBootstrapResult::top_label_ece, metric_text)},
      {std::string(rn::top_label_ece.text) + mass + bins, metric_text(r.top_label_equal_mass.ece)},
      {std::string(rn::classwise_ece.text) + width + bins,
       with_interval(metric_text(r.classwise_ece_equal_width), b, &ClassBootstrapResult::classwise_ece, metric_text)},
      {std::string(rn::classwise_ece.text) + mass + bins, metric_text(r.classwise_ece_equal_mass)},
  };
  if (r.true_class_at_zero > 0) rows.push_back({std::string(rn::label_probability_zero.text), count_text(r.true_class_at_zero)});
  std::size_t label_width = 0;
  for (const auto& [label, value] : rows) label_width = std::max(label_width, visible_width(label));
  for (const auto& [label, value] : rows) doc.line("  " + pad(label, label_width, false) + " " + value);
}

void render_table_of(Document& doc, const Painter& p, const ClassReport& r, const ReliabilityTable& t,
                     const std::string& range_word, const std::string& forecast_word, const std::string& observed_word) {
  const bool weighted = !r.weight_column.empty();
  std::vector<Column> columns = {
      {range_word + " range", false, 0, 0},
      {std::string(rn::rows.text), true, 0, 0},
      {std::string(rn::weight.text), true, weighted ? 3 : 0, 0},
      {forecast_word, true, 0, 0},
      {observed_word, true, 0, 0},
      {percent_text(t.confidence) + " Wilson", false, 2, 0},
      {std::string(rn::gap.text), true, 0, 0},
  };
  if (!weighted) columns.erase(columns.begin() + 2);
  std::vector<Row> rows;
  for (const ReliabilityBin& bin : t.bins) {
    Row row;
    const std::string range = std::isfinite(bin.edge_lo) && std::isfinite(bin.edge_hi)
                                  ? range_text(probability_text(bin.edge_lo), probability_text(bin.edge_hi), p.unicode)
                                  : std::string(not_a_number);
    row.cells = {range, count_text(bin.rows)};
    if (weighted) row.cells.push_back(weight_text(bin.weight));
    if (!(bin.weight > 0.0)) {
      row.tail = "empty";
      row.tone = Tone::dim;
    } else {
      row.cells.push_back(probability_text(bin.mean_forecast));
      row.cells.push_back(probability_text(bin.observed));
      row.cells.push_back(interval_text(probability_text(bin.observed_lo), probability_text(bin.observed_hi)));
      row.cells.push_back(difference_text(bin.gap));
    }
    rows.push_back(std::move(row));
  }
  render_table(doc, p, std::move(columns), std::move(rows));
}

void render_top_label(Document& doc, const Painter& p, const ClassReport& r, const std::string& of = {}) {
  const ReliabilityTable& t = r.top_label_table;
  doc.heading("top-label reliability" + of);
  doc.wrap(count_text(t.bins.size()) + " " + std::string(rn::binning(t.binning).text) +
               " bins of the confidence (the top label's probability); accuracy = share of the bin's rows whose "
               "top label is right; gap = confidence - accuracy (> 0: over-confident)",
           "  ", "  ");
  render_table_of(doc, p, r, t, "confidence", "confidence", "accuracy");
  ScoreSummary chart;
  chart.table = t;
  chart.band = r.top_label_band;
  chart.pav_curve = r.top_label_pav;
  chart.histogram = r.confidence_histogram;
  text::ChartWords words;
  words.y_title = "accuracy";
  words.x_title = "confidence (top-label probability)";
  words.bin_at = "mean confidence";
  words.diagonal = "confidence = accuracy";
  words.histogram = "confidence histogram";
  text::render_chart(doc, p, r.options.confidence, chart, words);
}

void render_classes(Document& doc, const Painter& p, const ClassReport& r, const std::string& of = {}) {
  doc.heading("classes, one-vs-rest" + of);
  doc.wrap("share = the class's share of the rows' labels; forecast = its mean probability; gap = forecast - share; "
           "ECE of its probability against its indicator, " + count_text(r.options.bins) + " bins",
           "  ", "  ");
  std::vector<Column> columns = {
      {std::string(rn::class_name.text), false, 0, 6},
      {std::string(rn::rows.text), true, 0, 0},
      {std::string(rn::class_share.text), true, 0, 0},
      {"forecast", true, 0, 0},
      {std::string(rn::gap.text), true, 0, 0},
      {std::string(rn::ece.text) + " " + std::string(rn::equal_width.text), true, 0, 0},
      {std::string(rn::ece.text) + " " + std::string(rn::equal_mass.text), true, 1, 0},
  };
  std::vector<Row> rows;
  for (const ClassSummary& c : r.classes) {
    Row row;
    row.cells = {c.name,
                 count_text(c.rows),
                 probability_text(c.observed_rate),
                 probability_text(c.mean_forecast),
                 difference_text(c.calibration_in_the_large),
                 metric_text(c.ece_equal_width.ece),
                 metric_text(c.ece_equal_mass.ece)};
    if (c.rows == 0) {
      row.marker = "!";
      row.tone = Tone::yellow;
    }
    rows.push_back(std::move(row));
  }
  render_table(doc, p, std::move(columns), std::move(rows));
  for (const ClassSummary& c : r.classes) {
    doc.heading("reliability: class " + c.name + ", one-vs-rest" + of);
    render_table_of(doc, p, r, c.table, "forecast", "forecast", "observed");
  }
}

// The segments of one model (--by): its headline figures per segment,
// flagged ones and then the heaviest, capped as the binary report's table.
void render_segments(Document& doc, const Painter& p, const ClassReport& r, const std::string& of) {
  if (r.segment_column.empty()) return;
  std::size_t flagged = 0;
  for (const ClassSegmentSummary& seg : r.segments) flagged += seg.flagged ? 1 : 0;
  doc.heading("segments by " + r.segment_column + of);
  doc.wrap("gap = mean confidence - accuracy; ECEs over " + count_text(r.options.bins) + " " +
               std::string(rn::equal_width.text) + " bins; ! flag: Holm-adjusted p of Spiegelhalter's Z of the "
               "confidence against a right top label < " + significant_text(r.segment_alpha, 4) + " (" +
               count_text(flagged) + " of " + count_text(r.segments.size()) + " segments)",
           "  ", "  ");
  std::vector<Column> columns = {
      {r.segment_column, false, 0, 6},
      {std::string(rn::rows.text), true, 0, 0},
      {"Brier", true, 0, 0},
      {"log loss", true, 0, 0},
      {std::string(rn::accuracy.text), true, 0, 0},
      {std::string(rn::gap.text), true, 0, 0},
      {std::string(rn::top_label_ece.text), true, 1, 0},
      {std::string(rn::classwise_ece.text), true, 2, 0},
      {std::string(rn::holm_p.text), true, 0, 0},
  };
  const std::vector<bool> shown = rn::segments_shown(r.segments);
  std::size_t left_out = 0;
  std::vector<Row> rows;
  for (std::size_t i = 0; i < r.segments.size(); ++i) {
    const ClassSegmentSummary& seg = r.segments[i];
    if (!shown[i]) {
      ++left_out;
      continue;
    }
    Row row;
    row.cells = {seg.value, count_text(seg.rows)};
    if (seg.too_few) {
      row.tail = "too few rows (weight " + weight_text(seg.weight) + " < " + weight_text(r.min_segment_weight) + ")";
      row.tone = Tone::dim;
    } else {
      row.cells.push_back(metric_text(seg.brier));
      row.cells.push_back(metric_text(seg.log_loss));
      row.cells.push_back(probability_text(seg.accuracy));
      row.cells.push_back(difference_text(seg.confidence_gap));
      row.cells.push_back(metric_text(seg.top_label_ece));
      row.cells.push_back(metric_text(seg.classwise_ece));
      row.cells.push_back(p_value_text(seg.p_adjusted));
      if (seg.flagged) {
        row.marker = "!";
        row.tone = Tone::red;
      }
    }
    rows.push_back(std::move(row));
  }
  render_table(doc, p, std::move(columns), std::move(rows));
  if (left_out > 0)
    doc.wrap(count_text(left_out) + " smaller segment" + (left_out == 1 ? "" : "s") +
                 " not shown (none flagged; every segment is in --json)",
             "  ", "  ");
}

void render_gates(Document& doc, const Painter& p, const std::vector<GateResult>& gates, bool with_model) {
  if (gates.empty()) return;
  std::size_t breached = 0;
  for (const GateResult& g : gates) breached += g.exceeded ? 1 : 0;
  doc.heading("gates");
  doc.line("  " + count_text(breached) + " of " + count_text(gates.size()) +
           (gates.size() == 1 ? " limit" : " limits") + " breached");
  std::vector<Column> columns = {
      {"", false, 0, 0}, {"metric", false, 0, 0}, {"value", true, 0, 0}, {"", false, 0, 0}, {"limit", true, 0, 0}};
  if (with_model) columns.insert(columns.begin() + 1, Column{"model", false, 0, 8});
  std::vector<Row> rows;
  for (const GateResult& g : gates) {
    Row row;
    row.cells = {g.exceeded ? "BREACHED" : "held", g.gate.metric, significant_text(g.value, 6),
                 std::string(gate_comparison(g)), significant_text(g.gate.limit, 6)};
    if (with_model) row.cells.insert(row.cells.begin() + 1, g.column);
    row.tone = g.exceeded ? Tone::red : Tone::green;
    rows.push_back(std::move(row));
  }
  render_table(doc, p, std::move(columns), std::move(rows));
}

// Every model's cautions (ClassReportSet::cautions: shared ones once, the
// others under their model's name).
void render_cautions(Document& doc, const Painter& p, const ClassReportSet& set) {
  const std::vector<std::string> cautions = set.cautions();
  if (cautions.empty()) return;
  doc.heading("cautions");
  const std::string marker = p.paint(p.unicode ? "\u25b8" : ">", Tone::yellow) + " ";
  for (const std::string& caution : cautions) doc.wrap(caution, marker, "  ");
}

// The headline figures of every model, one row each: the scores as read
// under their name, a map's model under its file's name.
void render_models(Document& doc, const Painter& p, const ClassReportSet& set) {
  doc.heading("models side by side");
  doc.wrap("the scores as read, then each map's model of them (by its file); Brier summed over classes, log loss "
           "in nats; gap = mean confidence - accuracy; ECEs over " +
               count_text(set.models.front().options.bins) + " " + std::string(rn::equal_width.text) + " bins",
           "  ", "  ");
  std::vector<Column> columns = {
      {"model", false, 0, 0},
      {"Brier", true, 0, 0},
      {"log loss", true, 0, 0},
      {std::string(rn::accuracy.text), true, 0, 0},
      {std::string(rn::gap.text), true, 2, 0},
      {std::string(rn::top_label_ece.text), true, 0, 0},
      {std::string(rn::classwise_ece.text), true, 1, 0},
  };
  std::vector<Row> rows;
  for (const ClassReport& r : set.models) {
    std::string name = r.name;
    if (r.map) name = r.map->file.substr(r.map->file.find_last_of('/') + 1);
    Row row;
    row.cells = {name,
                 metric_text(r.brier),
                 metric_text(r.log_loss),
                 probability_text(r.accuracy),
                 difference_text(r.confidence_gap),
                 metric_text(r.top_label_equal_width.ece),
                 metric_text(r.classwise_ece_equal_width)};
    rows.push_back(std::move(row));
  }
  render_table(doc, p, std::move(columns), std::move(rows));
}

}  // namespace

std::string render_class_text(const ClassReport& report, const TextStyle& style) {
  ClassReportSet set;
  set.models.push_back(report);
  set.gates = report.gates;
  return render_class_text(set, style);
}

std::string render_class_text(const ClassReportSet& set, const TextStyle& style) {
  const Painter p = Painter::of(style);
  Document doc(p);
  if (set.models.empty()) return doc.text();
  const bool several = set.models.size() > 1 || set.models.front().map;
  render_heading(doc, p, set.models.front());
  if (several) render_models(doc, p, set);
  for (const ClassReport& r : set.models) {
    std::string of;
    if (several) {
      of = ": " + r.name;
      if (r.map) {
        doc.heading("model " + r.name);
        doc.wrap("a " + r.map->kind + " map (" + r.map->file + ") applied to the scores as read; fitted on " +
                     r.map->fitted_source + ", " + count_text(r.map->fitted_rows) + " rows",
                 "  ", "  ");
      }
    }
    render_headlines(doc, r, of);
    render_top_label(doc, p, r, of);
    render_classes(doc, p, r, of);
    render_segments(doc, p, r, of);
  }
  render_gates(doc, p, set.gates, several);
  render_cautions(doc, p, set);
  return doc.text();
}

}  // namespace plumb
