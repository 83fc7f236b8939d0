// The terminal renderer of a Report (report_render.hpp): a heading, the
// headline figures of every score column (side by side when they fit), per
// column a reliability table, a reliability chart drawn in characters and the
// segment table, then the gates and the cautions.
//
// Width is counted in code points, and every glyph used is one column wide in
// a Western terminal (braille, box drawing, block elements, a few Latin-1
// signs), so counting code points is counting columns. ANSI escapes are
// skipped when counting. Whatever the sections compute, each line passes
// through one clip at the end, so no line can exceed style.width even for
// names or paths longer than the terminal.
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/report_render.hpp"
#include "report_names.hpp"

namespace plumb {
namespace {

// ---------------------------------------------------------------------------
// Styling and width

enum class Tone { plain, dim, bold, red, green, yellow, cyan };

constexpr std::string_view kReset = "\x1b[0m";

std::string_view tone_code(Tone tone) {
  switch (tone) {
    case Tone::dim: return "\x1b[2m";
    case Tone::bold: return "\x1b[1m";
    case Tone::red: return "\x1b[31m";
    case Tone::green: return "\x1b[32m";
    case Tone::yellow: return "\x1b[33m";
    case Tone::cyan: return "\x1b[36m";
    case Tone::plain: break;
  }
  return "";
}

// Terminal columns of s: one per code point, escape sequences excluded.
std::size_t visible_width(std::string_view s) {
  std::size_t n = 0;
  for (std::size_t i = 0; i < s.size(); ++i) {
    const auto c = static_cast<unsigned char>(s[i]);
    if (c == 0x1b) {
      // CSI: ESC '[' parameters, then one final byte in 0x40..0x7e.
      if (i + 1 < s.size() && s[i + 1] == '[') {
        i += 2;
        while (i < s.size() && !(s[i] >= 0x40 && s[i] <= 0x7e)) ++i;
      }
      continue;
    }
    if ((c & 0xC0) != 0x80) ++n;
  }
  return n;
}

struct Painter {
  bool unicode = true;
  bool colour = false;
  std::size_t width = 80;

  std::string paint(std::string_view s, Tone tone) const {
    if (!colour || tone == Tone::plain || s.empty()) return std::string(s);
    std::string out(tone_code(tone));
    out += s;
    out += kReset;
    return out;
  }
  std::string_view ellipsis() const { return unicode ? "\u2026" : "~"; }
  std::string_view rule() const { return unicode ? "\u2500" : "-"; }
  std::string_view dot_sep() const { return unicode ? " \u00b7 " : ", "; }
};

// Cuts s to `width` columns, ending in an ellipsis when something was cut.
// Escape sequences are kept (they take no column) and a reset is appended so
// a cut never leaves a colour running into the next line.
std::string clip(std::string_view s, std::size_t width, const Painter& p) {
  if (visible_width(s) <= width) return std::string(s);
  std::string out;
  bool escaped = false;
  std::size_t n = 0;
  const std::size_t keep = width == 0 ? 0 : width - 1;
  for (std::size_t i = 0; i < s.size(); ++i) {
    const auto c = static_cast<unsigned char>(s[i]);
    if (c == 0x1b) {
      std::size_t j = i + 1;
      if (j < s.size() && s[j] == '[') {
        ++j;
        while (j < s.size() && !(s[j] >= 0x40 && s[j] <= 0x7e)) ++j;
      }
      out.append(s.substr(i, j + 1 - i));
      escaped = true;
      i = j;
      continue;
    }
    if ((c & 0xC0) != 0x80) {
      if (n == keep) break;
      ++n;
    }
    out.push_back(static_cast<char>(c));
  }
  if (width > 0) out += p.ellipsis();
  if (escaped) out += kReset;
  return out;
}

std::string pad(std::string_view s, std::size_t width, bool right_align) {
  const std::size_t w = visible_width(s);
  if (w >= width) return std::string(s);
  const std::string fill(width - w, ' ');
  return right_align ? fill + std::string(s) : std::string(s) + fill;
}

// ---------------------------------------------------------------------------
// Numbers. Probabilities, scores and calibration errors get 4 decimals (the
// figures people compare across runs line up); test statistics 2 decimals;
// p-values 4 decimals, or 2 significant digits in scientific notation below
// 1e-4 where 4 decimals would print 0.

std::string printf_double(const char* format, int precision, double x) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, precision, x);
  return buffer;
}

// "-0.0000" says a sign the number does not have at this precision.
std::string drop_negative_zero(std::string s) {
  if (!s.empty() && s[0] == '-' &&
      s.find_first_not_of("0.", 1) == std::string::npos)
    s.erase(0, 1);
  return s;
}

std::string fixed(double x, int decimals) {
  if (!std::isfinite(x)) return "n/a";
  return drop_negative_zero(printf_double("%.*f", decimals, x));
}

std::string prob(double x) { return fixed(x, 4); }

std::string signed_fixed(double x, int decimals) {
  std::string s = fixed(x, decimals);
  if (s != "n/a" && s[0] != '-') s.insert(0, "+");
  return s;
}

// The shared formats (report_names.hpp): one per kind of figure.
std::string metric(double x) { return report_names::metric_text(x); }
std::string stat(double x) { return report_names::stat_text(x); }
std::string p_value(double p) { return report_names::p_value_text(p); }

// Gate values and limits: six significant digits, enough to tell a value
// from a limit it is close to.
std::string gate_number(double x) { return std::isfinite(x) ? printf_double("%.*g", 6, x) : "n/a"; }

std::string count(std::uint64_t n) { return std::to_string(n); }

std::string weight_text(double w) {
  if (!std::isfinite(w)) return "n/a";
  if (w == std::floor(w) && std::fabs(w) < 1e15) return printf_double("%.*f", 0, w);
  return printf_double("%.*f", 2, w);
}

std::string interval(double lo, double hi) {
  return "[" + metric(lo) + ", " + metric(hi) + "]";
}

std::string percent_level(double confidence) {
  return printf_double("%.*g", 4, confidence * 100.0) + "%";
}

// ---------------------------------------------------------------------------
// The document: lines, each clipped on the way in.

class Document {
 public:
  explicit Document(const Painter& p) : p_(p) {}

  void line(std::string_view s) { lines_.push_back(clip(s, p_.width, p_)); }
  void blank() {
    if (!lines_.empty() && !lines_.back().empty()) lines_.emplace_back();
  }

  // A section title: a blank line, then a heavy left bar and the title in
  // bold ("[title]" in ASCII). Nothing runs to the right edge.
  void heading(std::string_view title) {
    blank();
    const std::string text = p_.unicode ? "\u258c " + std::string(title) : "[" + std::string(title) + "]";
    line(p_.paint(clip(text, p_.width, p_), Tone::bold));
  }

  // Parts joined by `separator`, wrapped onto further lines (indented by
  // `indent`) where the next part would not fit.
  void flow(const std::vector<std::string>& parts, std::string_view separator,
            std::size_t indent) {
    std::string current(indent, ' ');
    bool first = true;
    for (const std::string& part : parts) {
      const std::size_t need = visible_width(current) +
                               (first ? 0 : visible_width(separator)) + visible_width(part);
      if (!first && need > p_.width) {
        line(current);
        current = std::string(indent, ' ') + part;
      } else {
        if (!first) current += separator;
        current += part;
      }
      first = false;
    }
    if (!first) line(current);
  }

  // Word-wrapped prose: `first` prefixes the first line, `next` the others.
  void wrap(std::string_view text, std::string_view first, std::string_view next) {
    std::string current(first);
    bool empty = true;
    std::size_t i = 0;
    while (i < text.size()) {
      while (i < text.size() && text[i] == ' ') ++i;
      std::size_t j = text.find(' ', i);
      if (j == std::string_view::npos) j = text.size();
      if (i == j) break;
      const std::string_view word = text.substr(i, j - i);
      const std::size_t need = visible_width(current) + (empty ? 0 : 1) + visible_width(word);
      if (!empty && need > p_.width) {
        line(current);
        current = std::string(next);
        empty = true;
      }
      if (!empty) current += ' ';
      current += word;
      empty = false;
      i = j;
    }
    if (!empty) line(current);
  }

  std::string text() const {
    std::string out;
    for (const std::string& l : lines_) {
      out += l;
      out += '\n';
    }
    return out;
  }

 private:
  const Painter& p_;
  std::vector<std::string> lines_;
};

// ---------------------------------------------------------------------------
// A plain table. Columns that do not fit are dropped, least important first,
// after the one shrinkable column (names of segments or score columns) has
// been cut down to its minimum.

struct Column {
  std::string header;
  bool right_align = true;
  int drop_order = 0;           // 0: never dropped; higher numbers go first
  std::size_t min_width = 0;    // > 0: may be cut down to this many columns
};

struct Row {
  std::vector<std::string> cells;  // may be shorter than the columns: then `tail` follows
  std::string tail;                // free text after the cells (e.g. "too few rows")
  Tone tone = Tone::plain;
  std::string marker;              // one column in front of the row ("!" for flags)
};

void render_table(Document& doc, const Painter& p, std::vector<Column> columns,
                  std::vector<Row> rows) {
  constexpr std::size_t indent = 2;
  constexpr std::size_t gap = 2;
  bool any_marker = false;
  for (const Row& r : rows) any_marker = any_marker || !r.marker.empty();
  const std::size_t marker_width = any_marker ? 2 : 0;

  std::vector<std::size_t> width(columns.size());
  std::vector<bool> shown(columns.size(), true);
  const auto measure = [&] {
    for (std::size_t c = 0; c < columns.size(); ++c) {
      width[c] = visible_width(columns[c].header);
      for (const Row& r : rows)
        if (c < r.cells.size()) width[c] = std::max(width[c], visible_width(r.cells[c]));
    }
  };
  const auto total = [&] {
    std::size_t t = indent + marker_width;
    bool first = true;
    for (std::size_t c = 0; c < columns.size(); ++c) {
      if (!shown[c]) continue;
      t += width[c] + (first ? 0 : gap);
      first = false;
    }
    return t;
  };
  measure();
  for (std::size_t c = 0; c < columns.size(); ++c) {
    if (columns[c].min_width == 0 || total() <= p.width) continue;
    const std::size_t excess = total() - p.width;
    const std::size_t target =
        std::max(columns[c].min_width, width[c] > excess ? width[c] - excess : 0);
    if (target < width[c]) {
      width[c] = target;
      columns[c].header = clip(columns[c].header, target, p);
      for (Row& r : rows)
        if (c < r.cells.size()) r.cells[c] = clip(r.cells[c], target, p);
    }
  }
  while (total() > p.width) {
    int worst = 0;
    std::size_t victim = columns.size();
    for (std::size_t c = 0; c < columns.size(); ++c)
      if (shown[c] && columns[c].drop_order > worst) {
        worst = columns[c].drop_order;
        victim = c;
      }
    if (victim == columns.size()) break;  // only essential columns left: clip
    shown[victim] = false;
  }

  const auto compose = [&](const std::vector<std::string>& cells, std::string_view tail,
                           std::string_view marker) {
    std::string out(indent, ' ');
    if (any_marker) out += pad(marker, marker_width, false);
    bool first = true;
    std::size_t c = 0;
    for (; c < columns.size() && c < cells.size(); ++c) {
      if (!shown[c]) continue;
      if (!first) out += std::string(gap, ' ');
      out += pad(cells[c], width[c], columns[c].right_align);
      first = false;
    }
    if (!tail.empty()) {
      if (!first) out += std::string(gap, ' ');
      out += tail;
    }
    while (!out.empty() && out.back() == ' ') out.pop_back();
    return out;
  };

  std::vector<std::string> headers;
  for (const Column& col : columns) headers.push_back(col.header);
  doc.line(p.paint(compose(headers, "", ""), Tone::dim));
  for (const Row& r : rows) doc.line(p.paint(compose(r.cells, r.tail, r.marker), r.tone));
}

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
  const auto boot = [](const ScoreSummary& s, BootstrapInterval BootstrapResult::*which,
                       std::string value) {
    if (s.bootstrap) {
      const BootstrapInterval& i = (*s.bootstrap).*which;
      value += " " + interval(i.lo, i.hi);
    }
    return value;
  };

  const std::size_t ece_bins = scores.empty() ? 0 : scores[0].overall.ece_equal_width.bins;
  const std::size_t mass_bins = scores.empty() ? 0 : scores[0].overall.ece_equal_mass.bins;
  const std::size_t hl_groups =
      scores.empty() ? 0 : scores[0].overall.hosmer_lemeshow.groups_requested;

  add("observed rate", [](const ScoreSummary& s) { return prob(s.observed_rate); });
  add("mean forecast", [](const ScoreSummary& s) { return prob(s.mean_forecast); });
  add(std::string(report_names::calibration_in_the_large.text),
      [](const ScoreSummary& s) { return signed_fixed(s.calibration_in_the_large, 4); });
  add("Brier score",
      [&](const ScoreSummary& s) { return boot(s, &BootstrapResult::brier, metric(s.brier)); });
  add("  MCB miscalibration", [&](const ScoreSummary& s) {
    return boot(s, &BootstrapResult::mcb_brier, metric(s.corp_brier.mcb));
  });
  add("  DSC discrimination", [](const ScoreSummary& s) { return metric(s.corp_brier.dsc); });
  add("  UNC uncertainty", [](const ScoreSummary& s) { return metric(s.corp_brier.unc); });
  add("log loss (nats)", [](const ScoreSummary& s) { return metric(s.log_loss); });
  // One row for the three log-loss terms keeps the block short; commas
  // rather than wider separators keep three columns inside 100.
  add("  MCB, DSC, UNC", [](const ScoreSummary& s) {
    return metric(s.corp_log_loss.mcb) + ", " + metric(s.corp_log_loss.dsc) + ", " +
           metric(s.corp_log_loss.unc);
  });
  const std::string width(report_names::equal_width.text), mass(report_names::equal_mass.text);
  add("ECE " + width + ", " + std::to_string(ece_bins) + " bins", [&](const ScoreSummary& s) {
    return boot(s, &BootstrapResult::ece, metric(s.ece_equal_width.ece));
  });
  add("ECE " + mass + ", " + std::to_string(mass_bins) + " bins",
      [](const ScoreSummary& s) { return metric(s.ece_equal_mass.ece); });
  add("MCE " + width, [](const ScoreSummary& s) { return metric(s.ece_equal_width.mce); });
  add("l2 debiased | plug-in", [](const ScoreSummary& s) {
    return metric(s.ece_equal_width.l2_debiased) + " | " + metric(s.ece_equal_width.l2_plugin);
  });
  add(std::string(report_names::calibration_slope.text),
      [](const ScoreSummary& s) { return fixed(s.regression.slope, 4); });
  add("  " + std::string(report_names::intercept_slope_free.text),
      [](const ScoreSummary& s) { return signed_fixed(s.regression.intercept_free, 4); });
  add(std::string(report_names::calibration_intercept.text), [](const ScoreSummary& s) {
    return signed_fixed(s.regression.intercept_at_unit_slope, 4);
  });
  add("H-L, " + std::to_string(hl_groups) + " groups", [](const ScoreSummary& s) {
    const HosmerLemeshow& h = s.hosmer_lemeshow;
    return stat(h.statistic) + " df " + fixed(h.df, 0) + " p " + p_value(h.p_value);
  });
  add("Spiegelhalter Z", [](const ScoreSummary& s) {
    return stat(s.spiegelhalter.z) + " p " + p_value(s.spiegelhalter.p_value);
  });
  add("AUC", [&](const ScoreSummary& s) { return boot(s, &BootstrapResult::auc, metric(s.auc)); });
  bool extremes = false;
  for (const ScoreReport& s : scores) extremes = extremes || s.overall.at_zero_or_one > 0;
  if (extremes)
    add("forecasts of 0 or 1", [](const ScoreSummary& s) { return count(s.at_zero_or_one); });
  return rows;
}

void render_headlines(Document& doc, const Painter& p, const Report& report) {
  const auto& scores = report.scores;
  if (scores.empty()) return;
  doc.heading("headline figures");
  bool any_bootstrap = false;
  for (const ScoreReport& s : scores) any_bootstrap = any_bootstrap || s.overall.bootstrap;
  if (any_bootstrap)
    doc.wrap("[lo, hi]: " + percent_level(report.options.confidence) +
                 " bootstrap percentile interval, " + std::to_string(report.options.bootstrap) +
                 " replicates",
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
    for (std::size_t i = 0; i < scores.size(); ++i)
      cell_width[i] = std::max(cell_width[i], visible_width(h.cells[i]));
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
      header += std::string(i == 0 ? label_gap : gap, ' ') +
                pad(p.paint(names[i], Tone::bold), cell_width[i], false);
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
      doc.line(std::string(indent + label_width + label_gap, ' ') +
               p.paint(scores[i].overall.name, Tone::bold));
      for (const Headline& h : rows) doc.line(label_cell(h.label) + std::string(label_gap, ' ') + h.cells[i]);
    }
  }

  // What the numbers above cannot say by themselves.
  for (const ScoreReport& s : scores) {
    const ScoreSummary& o = s.overall;
    if (!o.regression.converged)
      doc.wrap(o.name + ": the " + std::string(report_names::calibration_slope.text) +
                   " fit did not converge; slope and intercepts are not meaningful",
               "  ", "    ");
    if (o.hosmer_lemeshow.degenerate_groups > 0)
      doc.wrap(o.name + ": Hosmer-Lemeshow left out " +
                   std::to_string(o.hosmer_lemeshow.degenerate_groups) +
                   " group(s) with no variance",
               "  ", "    ");
  }
}

// ---------------------------------------------------------------------------
// The reliability table

void render_reliability_table(Document& doc, const Painter& p, const Report& report,
                              const ScoreSummary& s) {
  const ReliabilityTable& t = s.table;
  doc.heading("reliability: " + s.name);
  std::string kind(to_string(t.binning));
  std::replace(kind.begin(), kind.end(), '_', '-');
  doc.wrap(std::to_string(t.bins.size()) + " " + kind +
               " bins; gap = mean forecast - observed (> 0: forecasts too high)",
           "  ", "  ");
  const bool weighted = !report.weight_column.empty();
  const std::string_view dash = p.unicode ? "\u2013" : "-";
  std::vector<Column> columns = {
      {"forecast range", false, 0, 0},
      {"rows", true, 0, 0},
      {"weight", true, weighted ? 3 : 0, 0},
      {"forecast", true, 0, 0},
      {"observed", true, 0, 0},
      {percent_level(t.confidence) + " Wilson", false, 2, 0},
      {"gap", true, 0, 0},
  };
  if (!weighted) columns.erase(columns.begin() + 2);
  std::vector<Row> rows;
  for (const ReliabilityBin& b : t.bins) {
    Row r;
    const std::string range = std::isfinite(b.edge_lo) && std::isfinite(b.edge_hi)
                                  ? prob(b.edge_lo) + std::string(dash) + prob(b.edge_hi)
                                  : std::string("-");
    r.cells = {range, count(b.rows)};
    if (weighted) r.cells.push_back(weight_text(b.weight));
    if (!(b.weight > 0.0)) {
      r.tail = "empty";
      r.tone = Tone::dim;
    } else {
      r.cells.push_back(prob(b.mean_forecast));
      r.cells.push_back(prob(b.observed));
      r.cells.push_back("[" + prob(b.observed_lo) + ", " + prob(b.observed_hi) + "]");
      r.cells.push_back(signed_fixed(b.gap, 4));
    }
    rows.push_back(std::move(r));
  }
  render_table(doc, p, std::move(columns), std::move(rows));
}

// ---------------------------------------------------------------------------
// The reliability chart. In Unicode the diagonal and the PAV curve are drawn
// with braille dots (2 x 4 dots per cell, so lines are finer than the grid);
// bins are whole-cell marks and the consistency band is shaded cells. In
// ASCII everything is drawn at cell resolution.

constexpr std::size_t kChartRows = 21;      // 0, 0.25, ..., 1 fall on whole rows
constexpr std::size_t kChartColumns = 61;   // and on whole columns
constexpr std::size_t kAxisMargin = 8;      // "  0.75 |"

struct Cell {
  std::uint8_t diagonal_dots = 0;
  std::uint8_t curve_dots = 0;
  char ascii_line = 0;   // '.' diagonal, '-' '|' curve
  bool band = false;
  int mark = 0;          // 0 none, 1 bin inside its band (or no band), 2 outside
};

class Canvas {
 public:
  Canvas(std::size_t columns, std::size_t rows)
      : columns_(columns), rows_(rows), cells_(columns * rows) {}

  std::size_t columns() const { return columns_; }
  std::size_t rows() const { return rows_; }
  // row 0 is the bottom (observed frequency 0).
  Cell& at(std::size_t column, std::size_t row) { return cells_[row * columns_ + column]; }

  // Cell coordinates of a point in [0, 1]^2: cell centres sit at i / (n - 1).
  std::size_t column_of(double x) const { return scale(x, columns_); }
  std::size_t row_of(double y) const { return scale(y, rows_); }
  double x_of(std::size_t column) const { return static_cast<double>(column) / (columns_ - 1); }
  double y_of(std::size_t row) const { return static_cast<double>(row) / (rows_ - 1); }

  // Braille dots: two per cell across, four per cell down. Dot k across sits
  // at cell position k/2 - 1/4, dot j up at j/4 - 3/8 (cell centres at whole
  // numbers), so the nearest dot to a point is floor(2u + 1) and floor(4v + 2).
  std::size_t dot_columns() const { return 2 * columns_; }
  std::size_t dot_rows() const { return 4 * rows_; }
  double x_of_dot(std::size_t k) const {
    return std::clamp((static_cast<double>(k) / 2.0 - 0.25) / (columns_ - 1), 0.0, 1.0);
  }
  std::size_t dot_row_of(double y) const {
    const double v = std::clamp(y, 0.0, 1.0) * (rows_ - 1);
    return std::min(dot_rows() - 1, static_cast<std::size_t>(std::floor(4.0 * v + 2.0)));
  }
  void set_dot(std::size_t k, std::size_t j, bool curve) {
    // Braille bit of (dot column within the cell, dot row from the cell's top).
    static constexpr std::uint8_t bits[2][4] = {{0x01, 0x02, 0x04, 0x40},
                                                {0x08, 0x10, 0x20, 0x80}};
    Cell& c = at(k / 2, j / 4);
    const std::uint8_t bit = bits[k % 2][3 - j % 4];
    (curve ? c.curve_dots : c.diagonal_dots) |= bit;
  }

 private:
  static std::size_t scale(double t, std::size_t n) {
    const double v = std::clamp(t, 0.0, 1.0) * static_cast<double>(n - 1);
    return std::min(n - 1, static_cast<std::size_t>(std::lround(v)));
  }
  std::size_t columns_;
  std::size_t rows_;
  std::vector<Cell> cells_;
};

// The PAV (CORP) curve as a step function of the forecast: the value of the
// last block starting at or before x, inside the range of the forecasts.
double pav_at(const std::vector<PavBlock>& blocks, double x) {
  if (blocks.empty() || x < blocks.front().score_lo || x > blocks.back().score_hi)
    return std::nan("");
  auto it = std::upper_bound(blocks.begin(), blocks.end(), x,
                             [](double v, const PavBlock& b) { return v < b.score_lo; });
  return std::prev(it)->value;
}

void draw_chart(Canvas& canvas, const ScoreSummary& s, bool unicode) {
  const std::size_t W = canvas.columns();
  const std::size_t H = canvas.rows();
  const auto& bins = s.table.bins;

  // The band: for each bin, the cells over its forecast range between the
  // band's ends (always at least the cell nearest the band's middle).
  for (std::size_t b = 0; b < bins.size() && b < s.band.size(); ++b) {
    const Interval band = s.band[b];
    const ReliabilityBin& bin = bins[b];
    if (!std::isfinite(band.lo) || !std::isfinite(band.hi) || !(bin.weight > 0.0)) continue;
    std::size_t c0 = canvas.column_of(bin.mean_forecast);
    std::size_t c1 = c0;
    if (std::isfinite(bin.edge_lo) && std::isfinite(bin.edge_hi)) {
      for (std::size_t c = 0; c < W; ++c)
        if (canvas.x_of(c) >= bin.edge_lo && canvas.x_of(c) <= bin.edge_hi) {
          c0 = std::min(c0, c);
          c1 = std::max(c1, c);
        }
    }
    for (std::size_t c = c0; c <= c1; ++c) {
      canvas.at(c, canvas.row_of(0.5 * (band.lo + band.hi))).band = true;
      for (std::size_t r = 0; r < H; ++r)
        if (canvas.y_of(r) >= band.lo && canvas.y_of(r) <= band.hi) canvas.at(c, r).band = true;
    }
  }

  if (unicode) {
    // The diagonal every other dot (it reads as dotted), the curve every dot
    // with vertical runs at its steps (it reads as solid).
    for (std::size_t k = 0; k < canvas.dot_columns(); k += 2) {
      const double x = canvas.x_of_dot(k);
      canvas.set_dot(k, canvas.dot_row_of(x), false);
    }
    bool have_previous = false;
    std::size_t previous = 0;
    for (std::size_t k = 0; k < canvas.dot_columns(); ++k) {
      const double v = pav_at(s.pav_curve, canvas.x_of_dot(k));
      if (!std::isfinite(v)) {
        have_previous = false;
        continue;
      }
      const std::size_t j = canvas.dot_row_of(v);
      if (have_previous)
        for (std::size_t m = std::min(j, previous); m <= std::max(j, previous); ++m)
          canvas.set_dot(k, m, true);
      canvas.set_dot(k, j, true);
      have_previous = true;
      previous = j;
    }
  } else {
    for (std::size_t c = 0; c < W; ++c) canvas.at(c, canvas.row_of(canvas.x_of(c))).ascii_line = '.';
    bool have_previous = false;
    std::size_t previous = 0;
    for (std::size_t c = 0; c < W; ++c) {
      const double v = pav_at(s.pav_curve, canvas.x_of(c));
      if (!std::isfinite(v)) {
        have_previous = false;
        continue;
      }
      const std::size_t r = canvas.row_of(v);
      if (have_previous)
        for (std::size_t m = std::min(r, previous) + 1; m < std::max(r, previous); ++m)
          canvas.at(c, m).ascii_line = '|';
      canvas.at(c, r).ascii_line = '-';
      have_previous = true;
      previous = r;
    }
  }

  for (std::size_t b = 0; b < bins.size(); ++b) {
    const ReliabilityBin& bin = bins[b];
    if (!(bin.weight > 0.0) || !std::isfinite(bin.mean_forecast) || !std::isfinite(bin.observed))
      continue;
    bool outside = false;
    if (b < s.band.size() && std::isfinite(s.band[b].lo) && std::isfinite(s.band[b].hi))
      outside = bin.observed < s.band[b].lo || bin.observed > s.band[b].hi;
    canvas.at(canvas.column_of(bin.mean_forecast), canvas.row_of(bin.observed)).mark =
        outside ? 2 : 1;
  }
}

std::string braille(std::uint8_t bits) {
  const std::uint32_t cp = 0x2800u + bits;
  std::string out;
  out.push_back(static_cast<char>(0xE0 | (cp >> 12)));
  out.push_back(static_cast<char>(0x80 | ((cp >> 6) & 0x3F)));
  out.push_back(static_cast<char>(0x80 | (cp & 0x3F)));
  return out;
}

// One cell as a glyph and its tone. Precedence: bin mark, curve, diagonal, band.
std::pair<std::string, Tone> glyph(const Cell& c, bool unicode) {
  if (c.mark == 2) return {unicode ? "\u00d7" : "X", Tone::red};
  if (c.mark == 1) return {unicode ? "\u25cf" : "O", Tone::bold};
  if (unicode) {
    if (c.curve_dots) return {braille(c.curve_dots | c.diagonal_dots), Tone::cyan};
    if (c.diagonal_dots) return {braille(c.diagonal_dots), Tone::dim};
    if (c.band) return {"\u2591", Tone::yellow};
  } else {
    if (c.ascii_line == '-' || c.ascii_line == '|') return {std::string(1, c.ascii_line), Tone::cyan};
    if (c.ascii_line == '.') return {".", Tone::dim};
    if (c.band) return {":", Tone::yellow};
  }
  return {" ", Tone::plain};
}

// Forecast histogram as one strip of bar heights under the x axis: the
// density of each character column, integrated from the equal-width
// histogram so that no column is left blank between two histogram bins.
std::string histogram_strip(const Canvas& canvas, const std::vector<double>& histogram,
                            bool unicode) {
  static const std::vector<std::string> block_levels = {
      " ", "\u2581", "\u2582", "\u2583", "\u2584", "\u2585", "\u2586", "\u2587", "\u2588"};
  static const std::vector<std::string> ascii_levels = {" ", ".", ":", "-", "=", "+", "*", "#"};
  const auto& levels = unicode ? block_levels : ascii_levels;
  const std::size_t W = canvas.columns();
  const double nb = static_cast<double>(histogram.size());
  std::vector<double> density(W, 0.0);
  for (std::size_t c = 0; c < W; ++c) {
    const double half = 0.5 / static_cast<double>(W - 1);
    const double lo = std::max(0.0, canvas.x_of(c) - half);
    const double hi = std::min(1.0, canvas.x_of(c) + half);
    double mass = 0.0;
    for (std::size_t i = 0; i < histogram.size(); ++i) {
      const double b_lo = static_cast<double>(i) / nb;
      const double b_hi = static_cast<double>(i + 1) / nb;
      const double overlap = std::min(hi, b_hi) - std::max(lo, b_lo);
      if (overlap > 0.0 && std::isfinite(histogram[i])) mass += histogram[i] * overlap * nb;
    }
    density[c] = hi > lo ? mass / (hi - lo) : 0.0;
  }
  const double top = *std::max_element(density.begin(), density.end());
  std::string out;
  for (double d : density) {
    std::size_t level = 0;
    if (top > 0.0 && d > 0.0)
      level = std::clamp<std::size_t>(
          static_cast<std::size_t>(std::ceil(d / top * static_cast<double>(levels.size() - 1))), 1,
          levels.size() - 1);
    out += levels[level];
  }
  return out;
}

void render_chart(Document& doc, const Painter& p, const Report& report, const ScoreSummary& s) {
  // The plot takes what the width leaves after the axis margin, up to 61
  // columns; below 11 columns a chart says nothing and is left out.
  if (p.width < kAxisMargin + 12) return;
  const std::size_t W = std::min(kChartColumns, p.width - kAxisMargin - 1);
  const std::size_t H = kChartRows;
  Canvas canvas(W, H);
  draw_chart(canvas, s, p.unicode);

  const std::string_view vbar = p.unicode ? "\u2502" : "|";
  const std::string_view vtick = p.unicode ? "\u2524" : "+";
  const std::string_view corner = p.unicode ? "\u2514" : "+";
  const std::string_view hbar = p.unicode ? "\u2500" : "-";
  const std::string_view htick = p.unicode ? "\u252c" : "+";

  doc.blank();
  doc.line("  " + p.paint("observed frequency", Tone::bold));
  const double ticks[] = {0.0, 0.25, 0.5, 0.75, 1.0};
  for (std::size_t row = H; row-- > 0;) {
    std::string label(kAxisMargin - 1, ' ');
    std::string_view axis = vbar;
    for (double t : ticks)
      if (canvas.row_of(t) == row) {
        label = "  " + fixed(t, 2) + " ";
        axis = vtick;
      }
    std::string l = label + p.paint(axis, Tone::dim);
    Tone current = Tone::plain;
    std::string run;
    const auto flush = [&] {
      l += p.paint(run, current);
      run.clear();
    };
    for (std::size_t c = 0; c < W; ++c) {
      auto [g, tone] = glyph(canvas.at(c, row), p.unicode);
      if (tone != current) {
        flush();
        current = tone;
      }
      run += g;
    }
    flush();
    while (!l.empty() && l.back() == ' ') l.pop_back();
    doc.line(l);
  }
  std::string axis = std::string(kAxisMargin - 1, ' ') + std::string(corner);
  for (std::size_t c = 0; c < W; ++c) {
    bool tick = false;
    for (double t : ticks) tick = tick || canvas.column_of(t) == c;
    axis += tick ? htick : hbar;
  }
  doc.line(p.paint(axis, Tone::dim));
  if (!s.histogram.empty())
    doc.line(std::string(kAxisMargin, ' ') +
             p.paint(histogram_strip(canvas, s.histogram, p.unicode), Tone::dim));
  // Tick labels centred under their ticks, kept inside the plot's width.
  std::string labels(kAxisMargin + W + 2, ' ');
  for (double t : ticks) {
    const std::string text = t == 0.0 ? "0" : t == 1.0 ? "1" : fixed(t, 2);
    const std::size_t centre = kAxisMargin + canvas.column_of(t);
    std::size_t start = centre >= text.size() / 2 ? centre - text.size() / 2 : 0;
    start = std::min(start, labels.size() - text.size());
    labels.replace(start, text.size(), text);
  }
  while (!labels.empty() && labels.back() == ' ') labels.pop_back();
  doc.line(labels);
  const std::string title = "forecast probability";
  const std::size_t title_at = kAxisMargin + (W > title.size() ? (W - title.size()) / 2 : 0);
  doc.line(std::string(title_at, ' ') + p.paint(title, Tone::bold));

  // Legend, only for what is drawn.
  const bool has_band = !s.band.empty();
  std::vector<std::string> legend;
  legend.push_back(p.paint(p.unicode ? "\u25cf" : "O", Tone::bold) + " bin at mean forecast" +
                   (has_band ? ", inside band" : ""));
  if (has_band) {
    legend.push_back(p.paint(p.unicode ? "\u00d7" : "X", Tone::red) + " outside band");
    legend.push_back(p.paint(p.unicode ? "\u2591" : ":", Tone::yellow) + " " +
                     percent_level(report.options.confidence) +
                     " range of a calibrated forecaster");
  }
  legend.push_back((p.unicode ? "dotted: " : ". ") + std::string(report_names::diagonal.text));
  if (!s.pav_curve.empty())
    legend.push_back((p.unicode ? "solid: " : "- ") + std::string(report_names::pav_curve.text));
  if (!s.histogram.empty())
    legend.push_back(p.unicode ? "bars under the axis: forecast histogram"
                               : "strip under the axis: forecast histogram");
  doc.flow(legend, "   ", 2);
}

// ---------------------------------------------------------------------------
// Segments

void render_segments(Document& doc, const Painter& p, const Report& report,
                     const ScoreReport& score) {
  if (score.segments.empty()) return;
  std::size_t flagged = 0;
  for (const SegmentSummary& seg : score.segments) flagged += seg.flagged ? 1 : 0;
  const std::string by = report.segment_column.empty() ? "segment" : report.segment_column;
  doc.heading("segments by " + by + ": " + score.overall.name);
  doc.wrap("! flag: Holm-adjusted p of Spiegelhalter's Z < " +
               printf_double("%.*g", 4, report.options.segment_alpha) + " (" +
               std::to_string(flagged) + " of " + std::to_string(score.segments.size()) +
               " segments)",
           "  ", "  ");
  std::vector<Column> columns = {
      {by, false, 0, 6},         {"rows", true, 0, 0}, {"forecast", true, 0, 0},
      {"observed", true, 0, 0},  {"gap", true, 0, 0},  {"ECE", true, 1, 0},
      {"Z", true, 2, 0},         {"Holm p", true, 0, 0},
  };
  const std::vector<bool> shown = report_names::segments_shown(score.segments);
  std::size_t left_out = 0;
  std::vector<Row> rows;
  for (std::size_t i = 0; i < score.segments.size(); ++i) {
    const SegmentSummary& seg = score.segments[i];
    if (!shown[i]) {
      ++left_out;
      continue;
    }
    Row r;
    r.cells = {seg.value, count(seg.rows)};
    if (seg.too_few) {
      r.tail = "too few rows (weight " + weight_text(seg.weight) + " < " +
               weight_text(report.options.min_segment_weight) + ")";
      r.tone = Tone::dim;
    } else {
      r.cells.push_back(prob(seg.mean_forecast));
      r.cells.push_back(prob(seg.observed_rate));
      r.cells.push_back(signed_fixed(seg.calibration_in_the_large, 4));
      r.cells.push_back(metric(seg.ece));
      r.cells.push_back(stat(seg.spiegelhalter.z));
      r.cells.push_back(p_value(seg.p_adjusted));
      if (seg.flagged) {
        r.marker = "!";
        r.tone = Tone::red;
      }
    }
    rows.push_back(std::move(r));
  }
  render_table(doc, p, std::move(columns), std::move(rows));
  if (left_out > 0)
    doc.wrap(std::to_string(left_out) + " smaller segment" + (left_out == 1 ? "" : "s") +
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
  doc.line("  " + std::to_string(breached) + " of " + std::to_string(report.gates.size()) +
           (report.gates.size() == 1 ? " limit" : " limits") + " breached");
  std::vector<Column> columns = {{"", false, 0, 0},    {"column", false, 0, 6},
                                 {"metric", false, 0, 0}, {"value", true, 0, 0},
                                 {"", false, 0, 0},    {"limit", true, 0, 0}};
  std::vector<Row> rows;
  for (const GateResult& g : report.gates) {
    Row r;
    r.cells = {g.exceeded ? "BREACHED" : "held", g.column, g.gate.metric, gate_number(g.value),
               std::string(gate_comparison(g)), gate_number(g.gate.limit)};
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
  if (!report.scores.empty()) facts.push_back(count(report.scores[0].overall.rows) + " rows");
  if (report.rows_skipped)
    facts.push_back(count(*report.rows_skipped) + " left out for a missing score or label");
  facts.push_back("label " + report.label_column);
  if (report.weight_column.empty()) {
    facts.push_back("unweighted");
  } else {
    facts.push_back("weight " + report.weight_column);
    if (!report.scores.empty())
      facts.push_back("total weight " + weight_text(report.scores[0].overall.weight));
  }
  if (!report.segment_column.empty()) facts.push_back("segments by " + report.segment_column);
  facts.push_back(std::to_string(report.scores.size()) +
                  (report.scores.size() == 1 ? " score column" : " score columns"));
  doc.flow(facts, p.dot_sep(), 2);
}

}  // namespace

std::string render_text(const Report& report, const TextStyle& style) {
  Painter p;
  p.unicode = style.unicode;
  p.colour = style.colour;
  p.width = static_cast<std::size_t>(std::max(style.width, 1));
  Document doc(p);
  render_heading(doc, p, report);
  render_headlines(doc, p, report);
  for (const ScoreReport& score : report.scores) {
    render_reliability_table(doc, p, report, score.overall);
    render_chart(doc, p, report, score.overall);
    render_segments(doc, p, report, score);
  }
  render_gates(doc, p, report);
  render_cautions(doc, p, report);
  return doc.text();
}

}  // namespace plumb
