// The terminal renderer of a Report (report_render.hpp): its sections. A
// heading, the headline figures of every score column (side by side when
// they fit), per column a reliability table, a reliability chart
// (text_chart.hpp) and the segment table, then the gates and the cautions.
// Numbers and names come from the formatting layer (plumb/number_text.hpp,
// report_names.hpp); lines, tables and their fitting to the width from
// text_layout.hpp; colour and glyphs from the painter (text_painter.hpp).
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/io/report_render.hpp"
#include "report_names.hpp"
#include "text_chart.hpp"
#include "text_layout.hpp"
#include "text_trend.hpp"

namespace plumb {
namespace {

namespace rn = report_names;
using text::clip;
using text::Column;
using text::Document;
using text::pad;
using text::Painter;
using text::render_table;
using text::Row;
using text::Tone;
using text::visible_width;

// ---------------------------------------------------------------------------
// Headline figures

struct Headline {
  std::string label;
  std::vector<std::string> cells;  // one per score column
};

std::vector<Headline> headline_rows(const Report& report) {
  const auto& scores = report.scores;
  std::vector<Headline> rows;
  const auto add = [&](std::string label, auto cell_of) {
    Headline h{std::move(label), {}};
    for (const ScoreReport& s : scores) h.cells.push_back(cell_of(s.overall));
    rows.push_back(std::move(h));
  };
  const auto boot = [](const ScoreSummary& s, BootstrapInterval BootstrapResult::*which, std::string value) {
    if (s.bootstrap) {
      const BootstrapInterval& i = (*s.bootstrap).*which;
      value += " " + interval_text(metric_text(i.lo), metric_text(i.hi));
    }
    return value;
  };

  const std::size_t ece_bins = scores.empty() ? 0 : scores[0].overall.ece_equal_width.bins;
  const std::size_t mass_bins = scores.empty() ? 0 : scores[0].overall.ece_equal_mass.bins;
  const std::size_t hl_groups = scores.empty() ? 0 : scores[0].overall.hosmer_lemeshow.groups_requested;
  const auto label = [](const rn::Name& n) { return std::string(n.text); };
  // Parts of a figure (the terms of a decomposition) stand indented under it.
  const auto part = [](const rn::Name& n) { return "  " + std::string(n.text); };

  add(label(rn::observed_rate), [](const ScoreSummary& s) { return probability_text(s.observed_rate); });
  add(label(rn::mean_forecast), [](const ScoreSummary& s) { return probability_text(s.mean_forecast); });
  add(label(rn::calibration_in_the_large),
      [](const ScoreSummary& s) { return difference_text(s.calibration_in_the_large); });
  add(label(rn::brier), [&](const ScoreSummary& s) { return boot(s, &BootstrapResult::brier, metric_text(s.brier)); });
  add(part(rn::brier_mcb),
      [&](const ScoreSummary& s) { return boot(s, &BootstrapResult::mcb_brier, metric_text(s.corp_brier.mcb)); });
  add(part(rn::brier_dsc), [](const ScoreSummary& s) { return metric_text(s.corp_brier.dsc); });
  add(part(rn::brier_unc), [](const ScoreSummary& s) { return metric_text(s.corp_brier.unc); });
  add(label(rn::log_loss), [](const ScoreSummary& s) { return metric_text(s.log_loss); });
  // One row for the three log-loss terms keeps the block short; commas
  // rather than wider separators keep three columns inside 100.
  add(part(rn::log_loss_terms), [](const ScoreSummary& s) {
    return metric_text(s.corp_log_loss.mcb) + ", " + metric_text(s.corp_log_loss.dsc) + ", " +
           metric_text(s.corp_log_loss.unc);
  });
  const std::string width = label(rn::equal_width), mass = label(rn::equal_mass);
  add(label(rn::ece) + " " + width + ", " + count_text(ece_bins) + " bins",
      [&](const ScoreSummary& s) { return boot(s, &BootstrapResult::ece, metric_text(s.ece_equal_width.ece)); });
  add(label(rn::ece) + " " + mass + ", " + count_text(mass_bins) + " bins",
      [](const ScoreSummary& s) { return metric_text(s.ece_equal_mass.ece); });
  add(label(rn::mce) + " " + width, [](const ScoreSummary& s) { return metric_text(s.ece_equal_width.mce); });
  add(label(rn::l2_debiased) + " | " + label(rn::l2_plugin), [](const ScoreSummary& s) {
    return metric_text(s.ece_equal_width.l2_debiased) + " | " + metric_text(s.ece_equal_width.l2_plugin);
  });
  add(label(rn::calibration_slope), [](const ScoreSummary& s) { return fixed_text(s.regression.slope, 4); });
  add(part(rn::intercept_slope_free),
      [](const ScoreSummary& s) { return difference_text(s.regression.intercept_free); });
  add(label(rn::calibration_intercept),
      [](const ScoreSummary& s) { return difference_text(s.regression.intercept_at_unit_slope); });
  add(label(rn::hosmer_lemeshow) + ", " + count_text(hl_groups) + " groups", [](const ScoreSummary& s) {
    const HosmerLemeshow& h = s.hosmer_lemeshow;
    return stat_text(h.statistic) + " df " + fixed_text(h.df, 0) + " " + std::string(rn::hosmer_lemeshow_p.text) + " " +
           p_value_text(h.p_value);
  });
  add(label(rn::spiegelhalter), [](const ScoreSummary& s) {
    return stat_text(s.spiegelhalter.z) + " " + std::string(rn::spiegelhalter_p.text) + " " +
           p_value_text(s.spiegelhalter.p_value);
  });
  add(label(rn::auc), [&](const ScoreSummary& s) { return boot(s, &BootstrapResult::auc, metric_text(s.auc)); });
  bool extremes = false;
  for (const ScoreReport& s : scores) extremes = extremes || s.overall.at_zero_or_one > 0;
  if (extremes) add(label(rn::at_zero_or_one), [](const ScoreSummary& s) { return count_text(s.at_zero_or_one); });
  bool intervals = false;
  for (const ScoreReport& s : scores) intervals = intervals || s.overall.interval_width.has_value();
  if (intervals) {
    add(label(rn::interval_width) + ", mean", [](const ScoreSummary& s) {
      return s.interval_width ? metric_text(s.interval_width->mean) : std::string("-");
    });
    add("  median | 90%", [](const ScoreSummary& s) {
      return s.interval_width ? metric_text(s.interval_width->median) + " | " + metric_text(s.interval_width->p90)
                              : std::string("-");
    });
  }
  return rows;
}

void render_headlines(Document& doc, const Painter& p, const Report& report) {
  const auto& scores = report.scores;
  if (scores.empty()) return;
  doc.heading("headline figures");
  bool any_bootstrap = false;
  for (const ScoreReport& s : scores) any_bootstrap = any_bootstrap || s.overall.bootstrap;
  if (any_bootstrap)
    doc.wrap("[lo, hi]: " + percent_text(report.options.confidence) + " bootstrap percentile interval, " +
                 count_text(report.options.bootstrap) + " replicates",
             "  ", "  ");

  const std::vector<Headline> rows = headline_rows(report);
  std::size_t label_width = 0;
  for (const Headline& h : rows) label_width = std::max(label_width, visible_width(h.label));
  constexpr std::size_t indent = 2;
  constexpr std::size_t gap = 2;
  // One space after the labels: every label but the longest ("calibration
  // in the large") leaves more, and it keeps three columns with intervals
  // inside 100 columns.
  constexpr std::size_t label_gap = 1;

  std::vector<std::size_t> cell_width(scores.size(), 0);
  for (const Headline& h : rows)
    for (std::size_t i = 0; i < scores.size(); ++i) cell_width[i] = std::max(cell_width[i], visible_width(h.cells[i]));
  // Names may be cut to the width of their figures (at least 8 columns), not more.
  std::vector<std::string> names;
  std::size_t total = indent + label_width;
  for (std::size_t i = 0; i < scores.size(); ++i) {
    const std::size_t w = std::max<std::size_t>(cell_width[i], 8);
    names.push_back(clip(scores[i].overall.name, w, p));
    cell_width[i] = std::max(cell_width[i], visible_width(names.back()));
    total += (i == 0 ? label_gap : gap) + cell_width[i];
  }
  const bool side_by_side = scores.size() > 1 && scores.size() <= 3 && total <= p.width;

  const auto label_cell = [&](const std::string& label) {
    return std::string(indent, ' ') + pad(label, label_width, false);
  };
  if (side_by_side) {
    std::string header = std::string(indent + label_width, ' ');
    for (std::size_t i = 0; i < scores.size(); ++i)
      header += std::string(i == 0 ? label_gap : gap, ' ') + pad(p.paint(names[i], Tone::bold), cell_width[i], false);
    while (!header.empty() && header.back() == ' ') header.pop_back();
    doc.line(header);
    for (const Headline& h : rows) {
      std::string l = label_cell(h.label);
      for (std::size_t i = 0; i < scores.size(); ++i)
        l += std::string(i == 0 ? label_gap : gap, ' ') + pad(h.cells[i], cell_width[i], false);
      while (!l.empty() && l.back() == ' ') l.pop_back();
      doc.line(l);
    }
  } else {
    for (std::size_t i = 0; i < scores.size(); ++i) {
      if (i > 0) doc.blank();
      // The name stands over the figures, where the values begin.
      doc.line(std::string(indent + label_width + label_gap, ' ') + p.paint(scores[i].overall.name, Tone::bold));
      for (const Headline& h : rows) doc.line(label_cell(h.label) + std::string(label_gap, ' ') + h.cells[i]);
    }
  }

  // What the numbers above cannot say by themselves.
  for (const ScoreReport& s : scores) {
    const ScoreSummary& o = s.overall;
    if (!o.regression.converged)
      doc.wrap(o.name + ": the " + std::string(rn::calibration_slope.text) +
                   " fit did not converge; slope and intercepts are not meaningful",
               "  ", "    ");
    if (o.hosmer_lemeshow.degenerate_groups > 0)
      doc.wrap(o.name + ": " + std::string(rn::hosmer_lemeshow.markdown) + " left out " +
                   count_text(o.hosmer_lemeshow.degenerate_groups) + " group(s) with no variance",
               "  ", "    ");
  }
}

// ---------------------------------------------------------------------------
// The reliability table

void render_reliability_table(Document& doc, const Painter& p, const Report& report, const ScoreSummary& s) {
  const ReliabilityTable& t = s.table;
  doc.heading("reliability: " + s.name);
  doc.wrap(count_text(t.bins.size()) + " " + std::string(rn::binning(t.binning).text) +
               " bins; gap = mean forecast - observed (> 0: forecasts too high)",
           "  ", "  ");
  const bool weighted = !report.weight_column.empty();
  std::vector<Column> columns = {
      {"forecast range", false, 0, 0},
      {std::string(rn::rows.text), true, 0, 0},
      {std::string(rn::weight.text), true, weighted ? 3 : 0, 0},
      {"forecast", true, 0, 0},
      {"observed", true, 0, 0},
      {percent_text(t.confidence) + " Wilson", false, 2, 0},
      {std::string(rn::gap.text), true, 0, 0},
  };
  if (!weighted) columns.erase(columns.begin() + 2);
  std::vector<Row> rows;
  for (const ReliabilityBin& b : t.bins) {
    Row r;
    const std::string range = std::isfinite(b.edge_lo) && std::isfinite(b.edge_hi)
                                  ? range_text(probability_text(b.edge_lo), probability_text(b.edge_hi), p.unicode)
                                  : std::string(not_a_number);
    r.cells = {range, count_text(b.rows)};
    if (weighted) r.cells.push_back(weight_text(b.weight));
    if (!(b.weight > 0.0)) {
      r.tail = "empty";
      r.tone = Tone::dim;
    } else {
      r.cells.push_back(probability_text(b.mean_forecast));
      r.cells.push_back(probability_text(b.observed));
      r.cells.push_back(interval_text(probability_text(b.observed_lo), probability_text(b.observed_hi)));
      r.cells.push_back(difference_text(b.gap));
    }
    rows.push_back(std::move(r));
  }
  render_table(doc, p, std::move(columns), std::move(rows));
}

// ---------------------------------------------------------------------------
// Segments

void render_segments(Document& doc, const Painter& p, const Report& report, const ScoreReport& score) {
  if (score.segments.empty()) return;
  std::size_t flagged = 0;
  for (const SegmentSummary& seg : score.segments) flagged += seg.flagged ? 1 : 0;
  const std::string by = report.segment_column.empty() ? "segment" : report.segment_column;
  doc.heading("segments by " + by + ": " + score.overall.name);
  doc.wrap("! flag: Holm-adjusted p of Spiegelhalter's Z < " + significant_text(report.options.segment_alpha, 4) +
               " (" + count_text(flagged) + " of " + count_text(score.segments.size()) + " segments)",
           "  ", "  ");
  std::vector<Column> columns = {
      {by, false, 0, 6},        {std::string(rn::rows.text), true, 0, 0},   {"forecast", true, 0, 0},
      {"observed", true, 0, 0}, {std::string(rn::gap.text), true, 0, 0},    {std::string(rn::ece.text), true, 1, 0},
      {"Z", true, 2, 0},        {std::string(rn::holm_p.text), true, 0, 0},
  };
  const std::vector<bool> shown = rn::segments_shown(score.segments);
  std::size_t left_out = 0;
  std::vector<Row> rows;
  for (std::size_t i = 0; i < score.segments.size(); ++i) {
    const SegmentSummary& seg = score.segments[i];
    if (!shown[i]) {
      ++left_out;
      continue;
    }
    Row r;
    r.cells = {seg.value, count_text(seg.rows)};
    if (seg.too_few) {
      r.tail = "too few rows (weight " + weight_text(seg.weight) + " < " +
               weight_text(report.options.min_segment_weight) + ")";
      r.tone = Tone::dim;
    } else {
      r.cells.push_back(probability_text(seg.mean_forecast));
      r.cells.push_back(probability_text(seg.observed_rate));
      r.cells.push_back(difference_text(seg.calibration_in_the_large));
      r.cells.push_back(metric_text(seg.ece));
      r.cells.push_back(stat_text(seg.spiegelhalter.z));
      r.cells.push_back(p_value_text(seg.p_adjusted));
      if (seg.flagged) {
        r.marker = "!";
        r.tone = Tone::red;
      }
    }
    rows.push_back(std::move(r));
  }
  render_table(doc, p, std::move(columns), std::move(rows));
  if (left_out > 0)
    doc.wrap(count_text(left_out) + " smaller segment" + (left_out == 1 ? "" : "s") +
                 " not shown (none flagged; every segment is in --json)",
             "  ", "  ");
}

// ---------------------------------------------------------------------------
// Gates and cautions

void render_gates(Document& doc, const Painter& p, const Report& report) {
  if (report.gates.empty()) return;
  std::size_t breached = 0;
  for (const GateResult& g : report.gates) breached += g.exceeded ? 1 : 0;
  doc.heading("gates");
  doc.line("  " + count_text(breached) + " of " + count_text(report.gates.size()) +
           (report.gates.size() == 1 ? " limit" : " limits") + " breached");
  std::vector<Column> columns = {{"", false, 0, 0},     {"column", false, 0, 6}, {"metric", false, 0, 0},
                                 {"value", true, 0, 0}, {"", false, 0, 0},       {"limit", true, 0, 0}};
  std::vector<Row> rows;
  for (const GateResult& g : report.gates) {
    Row r;
    r.cells = {g.exceeded ? "BREACHED" : "held",
               g.column,
               g.gate.metric,
               significant_text(g.value, 6),
               std::string(gate_comparison(g)),
               significant_text(g.gate.limit, 6)};
    r.tone = g.exceeded ? Tone::red : Tone::green;
    rows.push_back(std::move(r));
  }
  render_table(doc, p, std::move(columns), std::move(rows));
}

void render_cautions(Document& doc, const Painter& p, const Report& report) {
  if (report.cautions.empty()) return;
  doc.heading("cautions");
  const std::string marker = p.paint(p.unicode ? "\u25b8" : ">", Tone::yellow) + " ";
  for (const std::string& caution : report.cautions) doc.wrap(caution, marker, "  ");
}

void render_heading(Document& doc, const Painter& p, const Report& report) {
  doc.line(p.paint("plumb report", Tone::bold) + std::string(p.dot_sep()) + report.source);
  std::vector<std::string> facts;
  if (!report.scores.empty()) facts.push_back(count_text(report.scores[0].overall.rows) + " rows");
  if (report.rows_skipped) facts.push_back(count_text(*report.rows_skipped) + " left out for a missing score or label");
  facts.push_back("label " + report.label_column);
  if (report.weight_column.empty()) {
    facts.push_back("unweighted");
  } else {
    facts.push_back("weight " + report.weight_column);
    if (!report.scores.empty()) facts.push_back("total weight " + weight_text(report.scores[0].overall.weight));
  }
  if (!report.segment_column.empty()) facts.push_back("segments by " + report.segment_column);
  facts.push_back(count_text(report.scores.size()) + (report.scores.size() == 1 ? " score column" : " score columns"));
  doc.flow(facts, p.dot_sep(), 2);
}

}  // namespace

std::string render_text(const Report& report, const TextStyle& style) {
  const Painter p = Painter::of(style);
  Document doc(p);
  render_heading(doc, p, report);
  render_headlines(doc, p, report);
  for (const ScoreReport& score : report.scores) {
    render_reliability_table(doc, p, report, score.overall);
    text::render_chart(doc, p, report, score.overall);
    render_segments(doc, p, report, score);
  }
  render_gates(doc, p, report);
  text::render_trend(doc, p, report);
  render_cautions(doc, p, report);
  return doc.text();
}

}  // namespace plumb
