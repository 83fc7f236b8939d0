// The review page (report_render.hpp, render_html; docs/review-page.md):
// one self-contained HTML document. Inline CSS and inline SVG only: no
// script, no font file, no address of any other resource, and a content
// security policy that forbids loading anything, so the page reads the same
// offline, from an attachment or from an archive years later.
//
// Every figure a reader sees in a table cell carries data-column (the
// column's position in the report, from 0), data-figure (the gate metric
// name, or a JSON key for figures no gate reads) and data-value (the
// shortest decimal that reads back to the same double), so that a test or a
// script can compare the page with the JSON report without parsing the
// formatted text.
#include <cmath>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/io/report_render.hpp"
#include "plumb/version.hpp"
#include "report_names.hpp"
#include "text_trend.hpp"

namespace plumb {
namespace {

namespace rn = report_names;

// The page's one caution that is always there, whatever the rows showed.
constexpr std::string_view kStandingCaution =
    "Calibrated probabilities feed decisions about people: credit, insurance, health, fraud. A calibrated score "
    "is only as good as the rows it was checked on, recalibration is not model validation, and credit, insurance "
    "and health uses follow local rules and licensed practice.";

// The look: a paper-white page, slate ink and one burnt-orange accent (the
// SVG charts' PAV colour), serif-free system faces, tables ruled by thin
// warm-grey lines. Breaches are marked by a word as well as by colour.
constexpr std::string_view kStyle = R"css(
:root { color-scheme: light; }
* { box-sizing: border-box; }
body { margin: 0; background: #f4f2ec; color: #1d232b;
  font: 15px/1.45 "Noto Sans", "Liberation Sans", Helvetica, Arial, sans-serif; }
main { max-width: 1120px; margin: 0 auto; padding: 28px 32px 48px; background: #fffefb;
  border-left: 6px solid #b35a12; min-height: 100vh; }
header p.kicker { margin: 0; letter-spacing: .08em; text-transform: uppercase; font-size: 12px; color: #6a5d4a; }
h1 { margin: 4px 0 6px; font-size: 26px; font-weight: 700; word-break: break-all; }
h2 { margin: 34px 0 10px; font-size: 19px; border-bottom: 2px solid #d9d3c4; padding-bottom: 4px; }
h3 { margin: 22px 0 8px; font-size: 16px; }
p.facts { margin: 0; color: #3b4450; }
.verdict { margin: 18px 0 0; padding: 10px 14px; border: 2px solid #1f3550; font-weight: 700; }
.verdict.breached { border-color: #a3312a; color: #7d1f19; background: #fbeeec; }
table { border-collapse: collapse; margin: 6px 0 14px; font-variant-numeric: tabular-nums; }
caption { text-align: left; font-weight: 700; padding: 4px 0 6px; }
th, td { padding: 4px 12px 4px 0; border-bottom: 1px solid #e4dfd2; vertical-align: top; }
thead th { text-align: left; font-size: 13px; color: #4d4434; border-bottom: 2px solid #cfc7b4; }
tbody th { text-align: left; font-weight: 600; }
td.num { text-align: right; white-space: nowrap; }
td.interval { color: #4d5866; white-space: nowrap; }
tr.breached td, tr.breached th { color: #7d1f19; }
.chart { overflow-x: auto; margin: 8px 0; }
.chart svg { max-width: 100%; height: auto; }
ul.cautions li { margin: 6px 0; }
dl.provenance { display: grid; grid-template-columns: max-content 1fr; gap: 2px 16px; margin: 6px 0 16px; }
dl.provenance dt { font-weight: 600; }
dl.provenance dd { margin: 0; word-break: break-all; }
footer { margin-top: 40px; font-size: 12px; color: #6a5d4a; }
@media print { body { background: #fff; } main { border: 0; padding: 0; } }
)css";

std::string esc(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (const char c : text) {
    const auto u = static_cast<unsigned char>(c);
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default:
        if (u < 0x20 && c != '\t' && c != '\n')
          out += "\xEF\xBF\xBD";
        else
          out += c;
    }
  }
  return out;
}

// A figure's data- attributes: the value read back exactly, or "null".
std::string data_attrs(std::size_t column, std::string_view figure, double value) {
  return " data-column=\"" + std::to_string(column) + "\" data-figure=\"" + esc(figure) + "\" data-value=\"" +
         (std::isfinite(value) ? shortest_text(value) : std::string("null")) + "\"";
}

// A standalone SVG document made fit to sit inside the page: no XML
// declaration, role="img" and its title and description named by id.
std::string inline_svg(std::string svg, const std::string& id, const std::string& title, const std::string& desc) {
  if (svg.starts_with("<?xml")) svg.erase(0, svg.find('\n') + 1);
  const std::size_t open = svg.find("<svg ");
  const std::size_t open_end = svg.find('>', open);
  std::string head = svg.substr(0, open_end + 1);
  std::string rest = svg.substr(open_end + 1);
  head.insert(5, "role=\"img\" aria-labelledby=\"" + id + "-title " + id + "-desc\" ");
  // The document's own title, if any, gives way to the page's.
  if (rest.starts_with("\n<title>")) rest.erase(0, rest.find("</title>") + 8);
  return head + "\n<title id=\"" + id + "-title\">" + esc(title) + "</title>\n<desc id=\"" + id + "-desc\">" +
         esc(desc) + "</desc>" + rest;
}

struct Row {
  std::string figure;  // data-figure
  std::string label;
  double value;
  std::string text;
  const BootstrapInterval* interval = nullptr;
};

// Every figure with a bootstrap interval is a metric (plumb/number_text.hpp).
std::string interval_cell(const BootstrapInterval* i) {
  if (i == nullptr || i->used == 0 || !std::isfinite(i->lo) || !std::isfinite(i->hi))
    return "<td class=\"interval\"></td>";
  const std::string lo = metric_text(i->lo), hi = metric_text(i->hi);
  return "<td class=\"interval\">" + esc(interval_text(lo, hi)) + "</td>";
}

void headline(std::string& out, const Report& report) {
  out += "<section aria-labelledby=\"headline\">\n<h2 id=\"headline\">Headline figures</h2>\n";
  for (std::size_t k = 0; k < report.scores.size(); ++k) {
    const ScoreSummary& s = report.scores[k].overall;
    const BootstrapResult* b = s.bootstrap ? &*s.bootstrap : nullptr;
    const bool mass = report.options.binning == BinningKind::equal_mass;
    std::vector<Row> rows = {
        {"rows", "rows", static_cast<double>(s.rows), count_text(s.rows)},
        {"observed_rate", rn::observed_rate.markdown_label(), s.observed_rate, probability_text(s.observed_rate)},
        {"mean_forecast", rn::mean_forecast.markdown_label(), s.mean_forecast, probability_text(s.mean_forecast)},
        {"calibration_in_the_large", rn::calibration_in_the_large.markdown_label(), s.calibration_in_the_large,
         difference_text(s.calibration_in_the_large)},
        {"ece", "ECE, equal-width bins", s.ece_equal_width.ece, metric_text(s.ece_equal_width.ece),
         b && !mass ? &b->ece : nullptr},
        {"ece_mass", "ECE, equal-mass bins", s.ece_equal_mass.ece, metric_text(s.ece_equal_mass.ece),
         b && mass ? &b->ece : nullptr},
        {"l2_debiased", rn::l2_debiased.markdown_label(), s.ece_equal_width.l2_debiased,
         metric_text(s.ece_equal_width.l2_debiased), b && !mass ? &b->l2_debiased : nullptr},
        {"brier", rn::brier.markdown_label(), s.brier, metric_text(s.brier), b ? &b->brier : nullptr},
        {"mcb", rn::brier_mcb.markdown_label(), s.corp_brier.mcb, metric_text(s.corp_brier.mcb),
         b ? &b->mcb_brier : nullptr},
        {"log_loss", rn::log_loss.markdown_label(), s.log_loss, metric_text(s.log_loss)},
        {"slope", rn::calibration_slope.markdown_label(), s.regression.slope, fixed_text(s.regression.slope, 4)},
        {"auc", rn::auc.markdown_label(), s.auc, metric_text(s.auc), b ? &b->auc : nullptr},
        {"hosmer_lemeshow_p", rn::hosmer_lemeshow_p.markdown_label(), s.hosmer_lemeshow.p_value,
         p_value_text(s.hosmer_lemeshow.p_value)},
        {"spiegelhalter_p", rn::spiegelhalter_p.markdown_label(), s.spiegelhalter.p_value,
         p_value_text(s.spiegelhalter.p_value)},
    };
    out += "<table class=\"headline\">\n<caption>" + esc(s.name) + "</caption>\n";
    out += "<thead><tr><th scope=\"col\">figure</th><th scope=\"col\">value</th><th scope=\"col\">" +
           esc(percent_text(report.options.confidence)) + " bootstrap interval</th></tr></thead>\n<tbody>\n";
    for (const Row& r : rows) {
      out += "<tr><th scope=\"row\">" + esc(r.label) + "</th><td class=\"num\"" + data_attrs(k, r.figure, r.value) +
             ">" + esc(r.text) + "</td>" + interval_cell(r.interval) + "</tr>\n";
    }
    out += "</tbody>\n</table>\n";
  }
  out += "</section>\n";
}

void reliability(std::string& out, const Report& report) {
  Report plain = report;
  plain.trend.clear();
  std::string desc =
      "Observed frequency against forecast probability for each score column, with the diagonal of "
      "perfect calibration, the PAV (CORP) curve and the bins; the numbers are in the tables below.";
  out += "<section aria-labelledby=\"reliability\">\n<h2 id=\"reliability\">Reliability</h2>\n<div class=\"chart\">\n";
  out += inline_svg(render_svg(plain), "reliability-chart", "Reliability diagrams of " + report.source, desc);
  out += "</div>\n";
  for (std::size_t k = 0; k < report.scores.size(); ++k) {
    const ScoreSummary& s = report.scores[k].overall;
    out += "<table class=\"bins\">\n<caption>" + esc(s.name) + ": " + count_text(report.options.bins) + " " +
           esc(rn::binning(report.options.binning).markdown_label()) + " bins</caption>\n";
    out +=
        "<thead><tr><th scope=\"col\">bin</th><th scope=\"col\">rows</th><th scope=\"col\">mean forecast</th>"
        "<th scope=\"col\">observed</th><th scope=\"col\">" +
        esc(percent_text(report.options.confidence)) +
        " Wilson interval</th><th scope=\"col\">gap</th></tr></thead>\n<tbody>\n";
    for (std::size_t i = 0; i < s.table.bins.size(); ++i) {
      const ReliabilityBin& b = s.table.bins[i];
      out += "<tr><th scope=\"row\">" + esc(range_text(probability_text(b.edge_lo), probability_text(b.edge_hi))) +
             "</th><td class=\"num\">" + count_text(b.rows) + "</td><td class=\"num\">" +
             esc(b.weight > 0 ? probability_text(b.mean_forecast) : std::string(not_a_number)) +
             "</td><td class=\"num\">" + esc(b.weight > 0 ? probability_text(b.observed) : std::string(not_a_number)) +
             "</td><td class=\"interval\">" +
             esc(b.weight > 0 ? interval_text(probability_text(b.observed_lo), probability_text(b.observed_hi))
                              : std::string()) +
             "</td><td class=\"num\">" + esc(b.weight > 0 ? difference_text(b.gap) : std::string(not_a_number)) +
             "</td></tr>\n";
    }
    out += "</tbody>\n</table>\n";
  }
  out += "</section>\n";
}

void segments(std::string& out, const Report& report) {
  if (report.segment_column.empty()) return;
  out += "<section aria-labelledby=\"segments\">\n<h2 id=\"segments\">Segments by " + esc(report.segment_column) +
         "</h2>\n";
  for (const ScoreReport& sr : report.scores) {
    out += "<table class=\"segments\">\n<caption>" + esc(sr.overall.name) +
           ", most miscalibrated first</caption>\n<thead><tr><th scope=\"col\">" + esc(report.segment_column) +
           "</th><th scope=\"col\">rows</th><th scope=\"col\">mean forecast</th><th scope=\"col\">observed</th>"
           "<th scope=\"col\">calibration in the large</th><th scope=\"col\">ECE</th><th scope=\"col\">Holm "
           "p</th><th scope=\"col\">flag</th></tr></thead>\n<tbody>\n";
    for (const SegmentSummary& g : sr.segments) {
      out += std::string(g.flagged ? "<tr class=\"breached\">" : "<tr>") + "<th scope=\"row\">" + esc(g.value) +
             "</th><td class=\"num\">" + count_text(g.rows) + "</td>";
      if (g.too_few) {
        out += "<td colspan=\"6\">too few rows</td></tr>\n";
        continue;
      }
      out += "<td class=\"num\">" + probability_text(g.mean_forecast) + "</td><td class=\"num\">" +
             probability_text(g.observed_rate) + "</td><td class=\"num\">" +
             difference_text(g.calibration_in_the_large) + "</td><td class=\"num\">" + metric_text(g.ece) +
             "</td><td class=\"num\">" + p_value_text(g.p_adjusted) + "</td><td>" + (g.flagged ? "miscalibrated" : "") +
             "</td></tr>\n";
    }
    out += "</tbody>\n</table>\n";
  }
  out += "</section>\n";
}

void gates(std::string& out, const Report& report) {
  if (report.gates.empty()) return;
  out +=
      "<section aria-labelledby=\"gates\">\n<h2 id=\"gates\">Gates</h2>\n<table class=\"gates\">\n"
      "<thead><tr><th scope=\"col\">outcome</th><th scope=\"col\">column</th><th scope=\"col\">metric</th>"
      "<th scope=\"col\">value</th><th scope=\"col\">bound</th><th scope=\"col\">limit</th></tr></thead>\n<tbody>\n";
  for (const GateResult& g : report.gates) {
    out += std::string(g.exceeded ? "<tr class=\"breached\">" : "<tr>") + "<th scope=\"row\">" +
           (g.exceeded ? "BREACHED" : "held") + "</th><td>" + esc(g.column) + "</td><td>" + esc(g.gate.metric) +
           "</td><td class=\"num\">" + esc(significant_text(g.value, 6)) + "</td><td>" +
           (g.gate.bound == GateBound::max ? "--max" : "--min") + "</td><td class=\"num\">" +
           esc(significant_text(g.gate.limit, 6)) + "</td></tr>\n";
  }
  out += "</tbody>\n</table>\n</section>\n";
}

void trend(std::string& out, const Report& report) {
  if (report.trend.empty()) return;
  out += "<section aria-labelledby=\"trend\">\n<h2 id=\"trend\">Trend over the history</h2>\n<div class=\"chart\">\n";
  out += inline_svg(render_trend_svg(report), "trend-chart", "Trend of each figure over the nights",
                    "Each figure's value per night with its bootstrap interval, the gates' limits and the nights the "
                    "map was refitted; the numbers are in the tables below.");
  out += "</div>\n";
  for (const TrendSeries& s : report.trend) {
    out += "<table class=\"trend\">\n<caption>" + esc(s.column) + ": " + esc(s.figure) +
           " by night</caption>\n<thead><tr><th scope=\"col\">night</th><th scope=\"col\">value</th><th "
           "scope=\"col\">interval</th><th scope=\"col\">map</th></tr></thead>\n<tbody>\n";
    for (const TrendPoint& t : s.points) {
      const bool has = std::isfinite(t.lo) && std::isfinite(t.hi);
      out += "<tr><th scope=\"row\">" + esc(t.date) + "</th><td class=\"num\">" +
             esc(text::trend_value_text(s.figure, t.value)) + "</td><td class=\"interval\">" +
             (has ? esc(interval_text(text::trend_value_text(s.figure, t.lo), text::trend_value_text(s.figure, t.hi)))
                  : std::string()) +
             "</td><td>" + (t.refit ? "refitted" : "") + "</td></tr>\n";
    }
    out += "</tbody>\n</table>\n";
  }
  out += "</section>\n";
}

void provenance(std::string& out, const Report& report) {
  bool any = false;
  for (const ScoreReport& sr : report.scores) any = any || sr.map.has_value();
  if (!any) return;
  out += "<section aria-labelledby=\"provenance\">\n<h2 id=\"provenance\">Where the maps came from</h2>\n";
  for (const ScoreReport& sr : report.scores) {
    if (!sr.map) continue;
    const MapOrigin& m = *sr.map;
    out += "<h3>" + esc(sr.overall.name) + "</h3>\n<dl class=\"provenance\">\n";
    const auto item = [&out](std::string_view term, const std::string& value) {
      if (!value.empty()) out += "<dt>" + esc(term) + "</dt><dd>" + esc(value) + "</dd>\n";
    };
    item("map file", m.file);
    item("kind", m.kind);
    item("applied to column", m.column);
    item("integrity hash", m.integrity);
    item("fitted", m.created_utc);
    item("fitted by", m.tool);
    item("fitted on", m.fitted_source);
    if (m.fitted_rows > 0) item("fit rows", count_text(m.fitted_rows));
    item("fit input SHA-256", m.fitted_sha256);
    out += "</dl>\n";
  }
  out += "</section>\n";
}

void cautions(std::string& out, const Report& report) {
  out += "<section aria-labelledby=\"cautions\">\n<h2 id=\"cautions\">Cautions</h2>\n<ul class=\"cautions\">\n";
  for (const std::string& c : report.cautions) out += "<li>" + esc(c) + "</li>\n";
  out += "<li>" + esc(kStandingCaution) + "</li>\n</ul>\n</section>\n";
}

}  // namespace

std::string render_html(const Report& report) {
  std::string out;
  out.reserve(65536);
  out += "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n";
  out += "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; style-src 'unsafe-inline'\">\n";
  out += "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n";
  out += "<meta name=\"generator\" content=\"plumb " + std::string(version_string) + "\">\n";
  out += "<title>Calibration review: " + esc(report.source) + "</title>\n<style>" + std::string(kStyle) +
         "</style>\n</head>\n<body>\n<main>\n<header>\n<p class=\"kicker\">plumb calibration review</p>\n";
  out += "<h1>" + esc(report.source) + "</h1>\n<p class=\"facts\">";
  std::string facts;
  if (!report.scores.empty()) facts += count_text(report.scores[0].overall.rows) + " rows";
  facts += (facts.empty() ? "" : " \u00b7 ") + std::string("label ") + report.label_column;
  facts += report.weight_column.empty() ? " \u00b7 unweighted" : " \u00b7 weight " + report.weight_column;
  if (!report.segment_column.empty()) facts += " \u00b7 segments by " + report.segment_column;
  if (report.options.bootstrap > 0)
    facts += " \u00b7 " + percent_text(report.options.confidence) + " bootstrap intervals from " +
             count_text(report.options.bootstrap) + " replicates";
  out += esc(facts) + "</p>\n";
  if (!report.gates.empty()) {
    std::size_t breached = 0;
    for (const GateResult& g : report.gates) breached += g.exceeded ? 1 : 0;
    out += std::string("<p class=\"verdict") + (breached ? " breached" : "") + "\" data-breached=\"" +
           std::to_string(breached) + "\">" +
           (breached ? count_text(breached) + " of " + count_text(report.gates.size()) +
                           (report.gates.size() == 1 ? " gate" : " gates") + " breached"
                     : "All " + count_text(report.gates.size()) + (report.gates.size() == 1 ? " gate" : " gates") +
                           " held") +
           "</p>\n";
  }
  out += "</header>\n";
  headline(out, report);
  gates(out, report);
  reliability(out, report);
  segments(out, report);
  trend(out, report);
  provenance(out, report);
  cautions(out, report);
  out += "<footer>Written by plumb " + std::string(version_string) +
         ". Every number on this page is also in the JSON report (plumb report --json).</footer>\n";
  out += "</main>\n</body>\n</html>\n";
  return out;
}

}  // namespace plumb
