// Markdown rendering of a Report, for pasting into a review: per score column
// the headline metrics, the score decompositions, the reliability table and
// the segments; then the gates, the cautions found and the standing cautions.
//
// Conventions: every table row has the header's cell count (a reader or a
// diff tool can rely on it); non-finite numbers print as "n/a"; text that
// comes from the data (names, values, cautions) is escaped so that it shows
// literally instead of becoming Markdown (a `|` would otherwise split a cell).
#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "plumb/report_render.hpp"
#include "report_names.hpp"

namespace plumb {
namespace {

bool finite(double x) { return std::isfinite(x); }

std::string to_chars_or_na(double x, std::chars_format format, int precision) {
  if (!finite(x)) return "n/a";
  char buf[64];
  const auto [end, ec] = std::to_chars(buf, buf + sizeof buf, x, format, precision);
  if (ec != std::errc{}) return "n/a";
  std::string s(buf, end);
  // "-0" and "-0.0000" say there is a sign where there is none.
  if (s.starts_with('-') && s.find_first_not_of("0.", 1) == std::string::npos) s.erase(0, 1);
  return s;
}

// Scores, calibration errors and interval ends: the text report's metric
// format (report_names.hpp), so a column has one format and the two
// documents print the same digits.
std::string num(double x) { return report_names::metric_text(x); }
// Test statistics (Z, Hosmer-Lemeshow): 2 decimals.
std::string stat(double x) { return report_names::stat_text(x); }
// Other quantities (effective sizes, levels): significant digits.
std::string general(double x, int digits) { return to_chars_or_na(x, std::chars_format::general, digits); }
// Gate limits and values: six significant digits, to tell a value from a limit it is close to.
std::string gate_num(double x) { return general(x, 6); }
// Probabilities and frequencies in tables: fixed, so the column lines up.
std::string prob(double x) { return to_chars_or_na(x, std::chars_format::fixed, 4); }
std::string signed_prob(double x) {
  std::string s = prob(x);
  if (finite(x) && x > 0 && s.find_first_not_of("0.") != std::string::npos) s.insert(0, "+");
  return s;
}
// p-values: the text report's rule (fixed above a floor, scientific below).
std::string p_value(double p) { return report_names::p_value_text(p); }
// Weights: whole numbers as such (the unweighted case), others with 6 digits.
std::string weight_text(double w) {
  if (finite(w) && w == std::floor(w) && std::fabs(w) < 1e15) return to_chars_or_na(w, std::chars_format::fixed, 0);
  return to_chars_or_na(w, std::chars_format::general, 6);
}
std::string percent(double confidence) {
  if (!finite(confidence)) return "n/a";
  return to_chars_or_na(confidence * 100.0, std::chars_format::general, 4) + "%";
}

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

std::string interval_text(const BootstrapInterval& i) {
  if (i.used == 0 || !finite(i.lo) || !finite(i.hi)) return "n/a";
  return num(i.lo) + " to " + num(i.hi);
}

std::string binning_name(BinningKind kind) {
  return std::string(kind == BinningKind::equal_mass ? report_names::equal_mass.text : report_names::equal_width.text);
}

void headline(std::string& out, const Report& report, const ScoreSummary& s) {
  const bool boot = s.bootstrap.has_value();
  const std::string level = percent(report.options.confidence);
  std::vector<std::string> header{"metric", "value"};
  if (boot) header.push_back(level + " interval");
  Table t(header, {false, true, false});
  const auto add = [&](std::string name, std::string value, const BootstrapInterval* interval = nullptr) {
    std::vector<std::string> cells{std::move(name), std::move(value)};
    if (boot) cells.push_back(interval != nullptr ? interval_text(*interval) : "");
    t.row(std::move(cells));
  };
  const BootstrapResult* b = boot ? &*s.bootstrap : nullptr;
  // The bootstrap re-makes the table's binning in each replicate, so its ECE
  // and debiased l2 intervals belong to that binning's rows only.
  const bool mass = report.options.binning == BinningKind::equal_mass;

  add("rows", std::to_string(s.rows));
  if (!report.weight_column.empty()) add("weight", weight_text(s.weight));
  add("positives (weight)", weight_text(s.positives));
  add("observed rate", prob(s.observed_rate));
  add("mean forecast", prob(s.mean_forecast));
  add("Brier score", num(s.brier), b ? &b->brier : nullptr);
  add("log loss (nats)", num(s.log_loss));
  add("CORP Brier MCB (miscalibration)", num(s.corp_brier.mcb), b ? &b->mcb_brier : nullptr);
  add("CORP Brier DSC (discrimination)", num(s.corp_brier.dsc));
  add("CORP Brier UNC (uncertainty)", num(s.corp_brier.unc));
  add("CORP log loss MCB / DSC / UNC",
      num(s.corp_log_loss.mcb) + " / " + num(s.corp_log_loss.dsc) + " / " + num(s.corp_log_loss.unc));
  for (const CalibrationError* e : {&s.ece_equal_width, &s.ece_equal_mass}) {
    const bool matches = (e->binning == BinningKind::equal_mass) == mass;
    const std::string bins = binning_name(e->binning) + ", " + std::to_string(e->bins) + " bins (" +
                             std::to_string(e->nonempty_bins) + " non-empty)";
    add("ECE, " + bins, num(e->ece), b && matches ? &b->ece : nullptr);
    add("MCE, " + binning_name(e->binning), num(e->mce));
    add("debiased l2 error, " + binning_name(e->binning), num(e->l2_debiased),
        b && matches ? &b->l2_debiased : nullptr);
  }
  namespace rn = report_names;
  add(std::string(rn::calibration_in_the_large.text) + " (mean forecast - observed)",
      signed_prob(s.calibration_in_the_large));
  const std::string caveat = s.regression.converged ? "" : " (fit did not converge)";
  add(std::string(rn::calibration_slope.text) + caveat, rn::fixed_text(s.regression.slope, 4));
  add(std::string(rn::intercept_slope_free.text) + caveat, signed_prob(s.regression.intercept_free));
  add(std::string(rn::calibration_intercept.text) + " (slope fixed at 1)" + caveat,
      signed_prob(s.regression.intercept_at_unit_slope));
  const HosmerLemeshow& hl = s.hosmer_lemeshow;
  add("Hosmer-Lemeshow statistic (" + std::to_string(hl.used_groups) + " of " + std::to_string(hl.groups_requested) +
          " groups)",
      stat(hl.statistic));
  add("Hosmer-Lemeshow df", rn::fixed_text(hl.df, 0));
  add("Hosmer-Lemeshow p-value", p_value(hl.p_value));
  add("Spiegelhalter Z", stat(s.spiegelhalter.z));
  add("Spiegelhalter p-value", p_value(s.spiegelhalter.p_value));
  add("AUC", num(s.auc), b ? &b->auc : nullptr);
  if (s.at_zero_or_one > 0) add("forecasts exactly 0 or 1", std::to_string(s.at_zero_or_one));
  t.write(out);
}

void reliability(std::string& out, const Report& report, const ScoreSummary& s) {
  const ReliabilityTable& table = s.table;
  const bool weighted = !report.weight_column.empty();
  const bool band = !s.band.empty();
  std::vector<std::string> header{"bin", "range", "rows"};
  if (weighted) header.insert(header.end(), {"weight", "effective size"});
  header.insert(header.end(), {"mean forecast", "observed", percent(table.confidence) + " Wilson interval",
                               "gap (forecast - observed)"});
  if (band) header.push_back(percent(report.options.confidence) + " band if calibrated");
  std::vector<bool> right(header.size(), true);
  right[1] = false;
  Table t(header, right);
  for (std::size_t b = 0; b < table.bins.size(); ++b) {
    const ReliabilityBin& bin = table.bins[b];
    const std::string range =
        finite(bin.edge_lo) && finite(bin.edge_hi) ? prob(bin.edge_lo) + " to " + prob(bin.edge_hi) : "empty";
    std::vector<std::string> cells{std::to_string(b + 1), range, std::to_string(bin.rows)};
    if (weighted) cells.insert(cells.end(), {weight_text(bin.weight), general(bin.effective_size, 4)});
    const bool has = bin.weight > 0;
    cells.push_back(has ? prob(bin.mean_forecast) : "n/a");
    cells.push_back(has ? prob(bin.observed) : "n/a");
    cells.push_back(has && finite(bin.observed_lo) && finite(bin.observed_hi)
                        ? prob(bin.observed_lo) + " to " + prob(bin.observed_hi)
                        : "n/a");
    cells.push_back(has ? signed_prob(bin.gap) : "n/a");
    if (band) {
      const bool in_range = b < s.band.size() && finite(s.band[b].lo) && finite(s.band[b].hi);
      cells.push_back(in_range ? prob(s.band[b].lo) + " to " + prob(s.band[b].hi) : "n/a");
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
      general(report.options.segment_alpha, 4) + "; segments under " + weight_text(report.options.min_segment_weight) +
      " weight have too few rows for figures.\n\n";
  const std::vector<bool> shown = report_names::segments_shown(r.segments);
  const auto left_out = static_cast<std::size_t>(std::count(shown.begin(), shown.end(), false));
  Table t({"segment", "rows", "weight", "positives", "mean forecast", "observed", "calibration in the large", "ECE",
           "Brier", "log loss", "Spiegelhalter Z", "Holm p", "flag"},
          {false, true, true, true, true, true, true, true, true, true, true, true, false});
  for (std::size_t i = 0; i < r.segments.size(); ++i) {
    if (!shown[i]) continue;
    const SegmentSummary& g = r.segments[i];
    std::vector<std::string> cells{md(g.value), std::to_string(g.rows), weight_text(g.weight),
                                   weight_text(g.positives)};
    if (g.too_few) {
      // Only rows, weight and positives are computed (report.hpp); the row
      // is padded to the header's width by Table.
      cells.push_back("too few rows");
    } else {
      cells.insert(cells.end(), {prob(g.mean_forecast), prob(g.observed_rate), signed_prob(g.calibration_in_the_large),
                                 num(g.ece), num(g.brier), num(g.log_loss), stat(g.spiegelhalter.z),
                                 p_value(g.p_adjusted), g.flagged ? "**flagged**" : "no"});
    }
    t.row(std::move(cells));
  }
  t.write(out);
  if (left_out > 0)
    out += std::to_string(left_out) + " smaller segment" + (left_out == 1 ? "" : "s") +
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
           (g.gate.bound == GateBound::max ? "at most " : "at least ") + gate_num(g.gate.limit), gate_num(g.value),
           g.exceeded ? "**FAIL**" : "pass"});
  }
  out += failed == 0 ? "Every gate passed.\n\n"
                     : std::to_string(failed) + " of " + std::to_string(report.gates.size()) + " gates failed.\n\n";
  t.write(out);
}

}  // namespace

std::string render_markdown(const Report& report) {
  std::string out;
  out.reserve(4096 + report.scores.size() * 8192);
  out += "# Reliability report: " + md(report.source) + "\n\n";
  const std::uint64_t rows = report.scores.empty() ? 0 : report.scores.front().overall.rows;
  out += "- Rows: " + std::to_string(rows) + "\n";
  if (report.rows_skipped)
    out += "- Rows left out for a missing score or label: " + std::to_string(*report.rows_skipped) + "\n";
  out += "- Label column: " + md(report.label_column) + "\n";
  out += "- Weight column: " + (report.weight_column.empty() ? std::string("none") : md(report.weight_column)) + "\n";
  out +=
      "- Segment column: " + (report.segment_column.empty() ? std::string("none") : md(report.segment_column)) + "\n";
  const ReportOptions& o = report.options;
  out += "- Bins: " + std::to_string(o.bins) + ", " + binning_name(o.binning) +
         "; Hosmer-Lemeshow groups: " + std::to_string(o.hl_groups) + "\n";
  if (o.bootstrap > 0) {
    out += "- Intervals: " + percent(o.confidence) + " percentile intervals from " + std::to_string(o.bootstrap) +
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
  out +=
      "A recalibration map fitted on past data holds only while the population and the model stay the same; "
      "check it again when either changes. Recalibration is not model validation: it makes the probabilities "
      "honest on these rows, not the model sound. Regulated and clinical uses (credit, insurance, health) "
      "follow local rules and licensed practice.\n";
  return out;
}

}  // namespace plumb
