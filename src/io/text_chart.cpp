// The reliability chart of the text report (text_chart.hpp), drawn on the
// character canvas: the band is shaded cells, the diagonal and the PAV
// (CORP) curve are lines (braille dots, or ASCII characters a cell each),
// the bins are whole-cell marks; one glyph per cell, in a fixed precedence.
#include "text_chart.hpp"

#include <algorithm>
#include <cmath>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "report_names.hpp"
#include "text_canvas.hpp"

namespace plumb::text {
namespace {

constexpr std::size_t kChartRows = 21;     // 0, 0.25, ..., 1 fall on whole rows
constexpr std::size_t kChartColumns = 61;  // and on whole columns
constexpr std::size_t kAxisMargin = 8;     // "  0.75 |"

// What the chart draws on which layer of a cell, and its marks.
constexpr std::size_t kDiagonalLayer = 0;
constexpr std::size_t kCurveLayer = 1;
constexpr int kMarkInside = 1;   // a bin inside its band (or without one)
constexpr int kMarkOutside = 2;  // a bin outside its band

// The PAV (CORP) curve as a step function of the forecast: the value of the
// last block starting at or before x, inside the range of the forecasts.
double pav_at(const std::vector<PavBlock>& blocks, double x) {
  if (blocks.empty() || x < blocks.front().score_lo || x > blocks.back().score_hi) return std::nan("");
  auto it =
      std::upper_bound(blocks.begin(), blocks.end(), x, [](double v, const PavBlock& b) { return v < b.score_lo; });
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
      canvas.at(c, canvas.row_of(0.5 * (band.lo + band.hi))).shade = true;
      for (std::size_t r = 0; r < H; ++r)
        if (canvas.y_of(r) >= band.lo && canvas.y_of(r) <= band.hi) canvas.at(c, r).shade = true;
    }
  }

  const auto diagonal = [](double x) { return x; };
  const auto curve = [&s](double x) { return pav_at(s.pav_curve, x); };
  if (unicode) {
    // The diagonal every other dot (it reads as dotted), the curve every dot
    // with vertical runs at its steps (it reads as solid).
    canvas.trace_dots(diagonal, kDiagonalLayer, 2, false);
    canvas.trace_dots(curve, kCurveLayer, 1, true);
  } else {
    canvas.trace_cells(diagonal, '.', 0);
    canvas.trace_cells(curve, '-', '|');
  }

  for (std::size_t b = 0; b < bins.size(); ++b) {
    const ReliabilityBin& bin = bins[b];
    if (!(bin.weight > 0.0) || !std::isfinite(bin.mean_forecast) || !std::isfinite(bin.observed)) continue;
    bool outside = false;
    if (b < s.band.size() && std::isfinite(s.band[b].lo) && std::isfinite(s.band[b].hi))
      outside = bin.observed < s.band[b].lo || bin.observed > s.band[b].hi;
    canvas.at(canvas.column_of(bin.mean_forecast), canvas.row_of(bin.observed)).mark =
        outside ? kMarkOutside : kMarkInside;
  }
}

// One cell as a glyph and its tone. Precedence: bin mark, curve, diagonal, band.
std::pair<std::string, Tone> glyph(const CanvasCell& c, bool unicode) {
  if (c.mark == kMarkOutside) return {unicode ? "\u00d7" : "X", Tone::red};
  if (c.mark == kMarkInside) return {unicode ? "\u25cf" : "O", Tone::bold};
  if (unicode) {
    if (c.dots[kCurveLayer]) return {braille(c.dots[kCurveLayer] | c.dots[kDiagonalLayer]), Tone::cyan};
    if (c.dots[kDiagonalLayer]) return {braille(c.dots[kDiagonalLayer]), Tone::dim};
    if (c.shade) return {"\u2591", Tone::yellow};
  } else {
    if (c.ascii == '-' || c.ascii == '|') return {std::string(1, c.ascii), Tone::cyan};
    if (c.ascii == '.') return {".", Tone::dim};
    if (c.shade) return {":", Tone::yellow};
  }
  return {" ", Tone::plain};
}

// Forecast histogram as one strip of bar heights under the x axis: the
// density of each character column, integrated from the equal-width
// histogram so that no column is left blank between two histogram bins.
std::string histogram_strip(const Canvas& canvas, const std::vector<double>& histogram, bool unicode) {
  static const std::vector<std::string> block_levels = {" ",      "\u2581", "\u2582", "\u2583", "\u2584",
                                                        "\u2585", "\u2586", "\u2587", "\u2588"};
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
          static_cast<std::size_t>(std::ceil(d / top * static_cast<double>(levels.size() - 1))), 1, levels.size() - 1);
    out += levels[level];
  }
  return out;
}

}  // namespace

void render_chart(Document& doc, const Painter& p, const Report& report, const ScoreSummary& s) {
  render_chart(doc, p, report.options.confidence, s, ChartWords{});
}

void render_chart(Document& doc, const Painter& p, double confidence, const ScoreSummary& s, const ChartWords& words) {
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
  doc.line("  " + p.paint(words.y_title, Tone::bold));
  const double ticks[] = {0.0, 0.25, 0.5, 0.75, 1.0};
  for (std::size_t row = H; row-- > 0;) {
    std::string label(kAxisMargin - 1, ' ');
    std::string_view axis = vbar;
    for (double t : ticks)
      if (canvas.row_of(t) == row) {
        label = "  " + fixed_text(t, 2) + " ";
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
    doc.line(std::string(kAxisMargin, ' ') + p.paint(histogram_strip(canvas, s.histogram, p.unicode), Tone::dim));
  // Tick labels centred under their ticks, kept inside the plot's width.
  std::string labels(kAxisMargin + W + 2, ' ');
  for (double t : ticks) {
    const std::string text = t == 0.0 ? "0" : t == 1.0 ? "1" : fixed_text(t, 2);
    const std::size_t centre = kAxisMargin + canvas.column_of(t);
    std::size_t start = centre >= text.size() / 2 ? centre - text.size() / 2 : 0;
    start = std::min(start, labels.size() - text.size());
    labels.replace(start, text.size(), text);
  }
  while (!labels.empty() && labels.back() == ' ') labels.pop_back();
  doc.line(labels);
  const std::string& title = words.x_title;
  const std::size_t title_at = kAxisMargin + (W > title.size() ? (W - title.size()) / 2 : 0);
  doc.line(std::string(title_at, ' ') + p.paint(title, Tone::bold));

  // Legend, only for what is drawn.
  const bool has_band = !s.band.empty();
  std::vector<std::string> legend;
  legend.push_back(p.paint(p.unicode ? "\u25cf" : "O", Tone::bold) + " bin at " + words.bin_at +
                   (has_band ? ", inside band" : ""));
  if (has_band) {
    legend.push_back(p.paint(p.unicode ? "\u00d7" : "X", Tone::red) + " outside band");
    legend.push_back(p.paint(p.unicode ? "\u2591" : ":", Tone::yellow) + " " + percent_text(confidence) +
                     " range of a calibrated forecaster");
  }
  legend.push_back((p.unicode ? "dotted: " : ". ") + words.diagonal);
  if (!s.pav_curve.empty()) legend.push_back((p.unicode ? "solid: " : "- ") + report_names::pav_curve.text_label());
  if (!s.histogram.empty())
    legend.push_back((p.unicode ? "bars under the axis: " : "strip under the axis: ") + words.histogram);
  doc.flow(legend, "   ", 2);
}

}  // namespace plumb::text
