// The trend section of the text report (text_trend.hpp).
#include "text_trend.hpp"

#include <algorithm>
#include <cmath>
#include <string>
#include <utility>
#include <vector>

#include "report_names.hpp"
#include "text_canvas.hpp"

namespace plumb::text {
namespace {

constexpr std::size_t kRows = 9;
constexpr std::size_t kMaxColumns = 60;
constexpr std::size_t kMinMargin = 10;  // "  0.0412 ┤"; wider for wider labels

constexpr std::size_t kLineLayer = 1;
constexpr int kMarkHeld = 1;    // a night within every gate on the figure
constexpr int kMarkBreach = 2;  // a night beyond a gate
constexpr int kMarkGate = 3;    // a cell of a gate's limit

// Whether `value` breaches `gate` (a value that is not a number does).
bool breaches(const Gate& gate, double value) {
  return gate.bound == GateBound::max ? !(value <= gate.limit) : !(value >= gate.limit);
}

std::pair<std::string, Tone> glyph(const CanvasCell& c, bool unicode) {
  if (c.mark == kMarkBreach) return {unicode ? "\u00d7" : "X", Tone::red};
  if (c.mark == kMarkHeld) return {unicode ? "\u25cf" : "O", Tone::bold};
  if (unicode && c.dots[kLineLayer]) return {braille(c.dots[kLineLayer]), Tone::cyan};
  if (!unicode && (c.ascii == '-' || c.ascii == '|')) return {std::string(1, c.ascii), Tone::cyan};
  if (c.mark == kMarkGate) return {unicode ? "\u2550" : "=", Tone::red};
  if (c.shade) return {unicode ? "\u2591" : ":", Tone::yellow};
  return {" ", Tone::plain};
}

}  // namespace

std::string trend_value_text(const std::string& figure, double value) {
  if (figure == "calibration_in_the_large") return difference_text(value);
  if (figure.size() > 2 && figure.ends_with("_p")) return p_value_text(value);
  return metric_text(value);
}

void render_trend(Document& doc, const Painter& p, const Report& report) {
  if (report.trend.empty() || p.width < kMinMargin + 13) return;
  doc.heading("trend");
  for (const TrendSeries& s : report.trend) {
    const std::size_t n = s.points.size();
    std::size_t margin = kMinMargin;
    // The vertical range: every value, interval end and gate limit, padded.
    double lo = INFINITY, hi = -INFINITY;
    const auto take = [&](double v) {
      if (std::isfinite(v)) {
        lo = std::min(lo, v);
        hi = std::max(hi, v);
      }
    };
    for (const TrendPoint& t : s.points) {
      take(t.value);
      take(t.lo);
      take(t.hi);
    }
    for (const Gate& g : s.gates) take(g.limit);
    doc.blank();
    std::string title = p.paint(s.column, Tone::bold) + std::string(p.dot_sep()) + s.figure + std::string(p.dot_sep()) +
                        count_text(n) + (n == 1 ? " night, " : " nights, ") + s.points.front().date;
    if (n > 1) title += (p.unicode ? " \u2026 " : " to ") + s.points.back().date;
    doc.line("  " + title);
    if (!std::isfinite(lo)) {
      doc.line("  no night has a value of this figure");
      continue;
    }
    if (hi - lo < 1e-12 * std::max(1.0, std::fabs(hi))) {
      const double pad = std::max(std::fabs(hi) * 0.1, 1e-3);
      lo = lo >= 0.0 ? std::max(0.0, lo - pad) : lo - pad;
      hi += pad;
    } else {
      const double pad = 0.08 * (hi - lo);
      // Padding never takes a figure that cannot be negative below 0.
      lo = lo >= 0.0 ? std::max(0.0, lo - pad) : lo - pad;
      hi += pad;
    }
    std::size_t label_width = 0;
    for (double v : {lo, hi}) label_width = std::max(label_width, visible_width(trend_value_text(s.figure, v)));
    for (const Gate& g : s.gates)
      label_width = std::max(label_width, visible_width(trend_value_text(s.figure, g.limit)));
    margin = std::max(kMinMargin, label_width + 4);
    if (p.width < margin + 13) continue;
    const std::size_t W = std::min(kMaxColumns, p.width - margin - 1);
    Canvas canvas(W, kRows);
    const auto y_of = [&](double v) { return (v - lo) / (hi - lo); };
    const auto x_of = [&](std::size_t i) { return n == 1 ? 0.5 : static_cast<double>(i) / static_cast<double>(n - 1); };

    for (std::size_t i = 0; i < n; ++i) {
      const TrendPoint& t = s.points[i];
      if (!std::isfinite(t.lo) || !std::isfinite(t.hi)) continue;
      const std::size_t c = canvas.column_of(x_of(i));
      for (std::size_t r = 0; r < kRows; ++r)
        if (canvas.y_of(r) >= y_of(t.lo) - 0.5 / (kRows - 1) && canvas.y_of(r) <= y_of(t.hi) + 0.5 / (kRows - 1))
          canvas.at(c, r).shade = true;
    }
    for (const Gate& g : s.gates) {
      const std::size_t r = canvas.row_of(y_of(g.limit));
      for (std::size_t c = 0; c < W; ++c) canvas.at(c, r).mark = kMarkGate;
    }
    // The line through the nights' values: linear between two nights,
    // broken where a night has no value.
    const auto line = [&](double x) {
      if (n < 2) return std::nan("");
      const double pos = x * static_cast<double>(n - 1);
      const std::size_t i = std::min(static_cast<std::size_t>(pos), n - 2);
      const double a = s.points[i].value, b = s.points[i + 1].value;
      if (!std::isfinite(a) || !std::isfinite(b)) return std::nan("");
      return y_of(a + (b - a) * (pos - static_cast<double>(i)));
    };
    if (p.unicode)
      canvas.trace_dots(line, kLineLayer, 1, true);
    else
      canvas.trace_cells(line, '-', '|');
    std::vector<bool> refit_column(W, false);
    for (std::size_t i = 0; i < n; ++i) {
      const TrendPoint& t = s.points[i];
      if (t.refit) refit_column[canvas.column_of(x_of(i))] = true;
      if (!std::isfinite(t.value)) continue;
      bool breach = false;
      for (const Gate& g : s.gates) breach = breach || breaches(g, t.value);
      canvas.at(canvas.column_of(x_of(i)), canvas.row_of(y_of(t.value))).mark = breach ? kMarkBreach : kMarkHeld;
    }

    // Refits above the plot, then the plot with the top, bottom and gate values on the axis.
    bool any_refit = false;
    std::string refits(margin, ' ');
    for (std::size_t c = 0; c < W; ++c) {
      refits += refit_column[c] ? (p.unicode ? "\u25bc" : "v") : " ";
      any_refit = any_refit || refit_column[c];
    }
    if (any_refit) {
      while (!refits.empty() && refits.back() == ' ') refits.pop_back();
      doc.line(p.paint(refits, Tone::yellow));
    }
    std::vector<std::pair<std::size_t, double>> labels = {{kRows - 1, hi}, {0, lo}};
    for (const Gate& g : s.gates) labels.push_back({canvas.row_of(y_of(g.limit)), g.limit});
    for (std::size_t row = kRows; row-- > 0;) {
      std::string label(margin - 1, ' ');
      std::string_view axis = p.unicode ? "\u2502" : "|";
      for (const auto& [r, v] : labels)
        if (r == row) {
          const std::string text = trend_value_text(s.figure, v);
          label = std::string(margin - 2 - text.size(), ' ') + text + " ";
          axis = p.unicode ? "\u2524" : "+";
        }
      std::string l = label + p.paint(axis, Tone::dim);
      Tone current = Tone::plain;
      std::string run;
      for (std::size_t c = 0; c < W; ++c) {
        auto [g, tone] = glyph(canvas.at(c, row), p.unicode);
        if (tone != current) {
          l += p.paint(run, current);
          run.clear();
          current = tone;
        }
        run += g;
      }
      l += p.paint(run, current);
      while (!l.empty() && l.back() == ' ') l.pop_back();
      doc.line(l);
    }
    std::string axis = std::string(margin - 1, ' ') + (p.unicode ? "\u2514" : "+");
    for (std::size_t c = 0; c < W; ++c) axis += p.unicode ? "\u2500" : "-";
    doc.line(p.paint(axis, Tone::dim));
    std::string dates(margin, ' ');
    dates += s.points.front().date;
    if (n > 1) {
      const std::string& last = s.points.back().date;
      const std::size_t end = margin + W;
      if (end > dates.size() + last.size())
        dates += std::string(end - dates.size() - last.size(), ' ');
      else
        dates += "  ";
      dates += last;
    }
    doc.line(dates);
    std::vector<std::string> legend;
    legend.push_back(p.paint(p.unicode ? "\u25cf" : "O", Tone::bold) + " night's value");
    bool any_interval = false, any_breach = false;
    for (const TrendPoint& t : s.points) {
      any_interval = any_interval || (std::isfinite(t.lo) && std::isfinite(t.hi));
      for (const Gate& g : s.gates) any_breach = any_breach || (std::isfinite(t.value) && breaches(g, t.value));
    }
    if (any_breach) legend.push_back(p.paint(p.unicode ? "\u00d7" : "X", Tone::red) + " beyond a gate");
    if (any_interval)
      legend.push_back(p.paint(p.unicode ? "\u2591" : ":", Tone::yellow) + " " +
                       percent_text(report.options.confidence) + " bootstrap interval");
    for (const Gate& g : s.gates)
      legend.push_back(p.paint(p.unicode ? "\u2550" : "=", Tone::red) + " gate " +
                       (g.bound == GateBound::max ? "--max " : "--min ") + trend_value_text(s.figure, g.limit));
    if (any_refit) legend.push_back(p.paint(p.unicode ? "\u25bc" : "v", Tone::yellow) + " map refitted");
    doc.flow(legend, "   ", 2);
  }
}

}  // namespace plumb::text
