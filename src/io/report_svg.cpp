// SVG rendering of a Report: one reliability diagram per score column, two
// per row, each with a forecast histogram beneath and one shared legend.
//
// Axis transform (the tests rely on it): each diagram's plot area is the
// element <rect class="plot-area" x=X y=Y width=S height=S>, and a point
// (forecast p, observed frequency o) sits at
//   cx = X + S * p,   cy = Y + S * (1 - o).
// The histogram strip beneath shares the horizontal transform.
//
// The document is plain SVG 1.1: no scripts, no external resources, no CSS
// (presentation attributes only, so every viewer and converter draws the
// same picture), text escaped for XML. Non-finite values are never written:
// any element that would need one is left out.
#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/error.hpp"
#include "plumb/io/class_report_render.hpp"
#include "plumb/io/report_render.hpp"
#include "report_names.hpp"
#include "text_trend.hpp"

namespace plumb {
namespace {

// Geometry, in SVG user units (px). Chosen so that two diagrams per row fit
// an A4/Letter page width when printed at about 80%.
constexpr double kPlotSide = 340.0;
constexpr double kPanelWidth = 520.0;
constexpr double kTextLeft = 14.0;  // within a panel: title and subtitle
constexpr double kPlotLeft = 96.0;  // within a panel: room for the y tick labels and axis label
constexpr double kPlotTop = 62.0;   // below the title and subtitle
constexpr double kHistGap = 10.0;   // plot bottom to histogram top
constexpr double kHistHeight = 54.0;
constexpr double kPanelHeight = kPlotTop + kPlotSide + kHistGap + kHistHeight + 52.0;
constexpr double kDocMargin = 16.0;
constexpr double kTitleHeight = 58.0;  // document title and source line, above the legend
constexpr std::size_t kPerRow = 2;
constexpr std::size_t kMaxTitleChars = 64;  // longer names are cut with an ellipsis

// Palette: a dark slate for data points, a burnt orange for the PAV (CORP)
// curve, a pale violet band and warm greys. Every series also differs in
// line weight or dash pattern so the chart reads in greyscale.
// Fonts: common system sans faces in an order of our own, ending in the
// generic family so every viewer has one.
constexpr std::string_view kFontStack = "Noto Sans, Liberation Sans, Helvetica, Arial, sans-serif";

constexpr std::string_view kInk = "#222222";
constexpr std::string_view kGrid = "#e4e4e0";
constexpr std::string_view kDiagonal = "#7a7a7a";
constexpr std::string_view kBandFill = "#ddd6ee";
constexpr std::string_view kBandEdge = "#8a7fb0";
constexpr std::string_view kCurve = "#b35a12";
constexpr std::string_view kPoint = "#1f3550";
constexpr std::string_view kHistFill = "#c9c6bd";
constexpr std::string_view kHistEdge = "#8d897e";

bool finite(double x) { return std::isfinite(x); }

// Geometry (coordinates, sizes, angles) as attribute values: locale-independent,
// `decimals` fixed decimals (std::to_chars never reads the C locale, unlike
// printf). Numbers a reader sees come from the formatting layer
// (plumb/number_text.hpp) like those of every other renderer.
std::string fixed(double x, int decimals) {
  char buf[64];
  const auto [end, ec] = std::to_chars(buf, buf + sizeof buf, x, std::chars_format::fixed, decimals);
  if (ec != std::errc{}) return "0";
  std::string s(buf, end);
  // "-0.00" would read as a negative number that is not there.
  if (s.starts_with('-') && s.find_first_not_of("0.", 1) == std::string::npos) s.erase(0, 1);
  return s;
}

// A coordinate: two decimals is a hundredth of a pixel, finer than any
// printer, and keeps the file small.
std::string coord(double x) { return fixed(x, 2); }

// XML character data and attribute values. Control characters other than
// tab, newline and carriage return are not allowed in XML 1.0 at all, so they
// become U+FFFD; the input is assumed to be UTF-8 (the CLI refuses other names).
std::string xml_escape(std::string_view text) {
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
        out += "&apos;";
        break;
      default:
        if (u < 0x20 && c != '\t' && c != '\n' && c != '\r') {
          out += "\xEF\xBF\xBD";
        } else {
          out += c;
        }
    }
  }
  return out;
}

// Cuts a UTF-8 string to at most `max_chars` code points, marking the cut.
std::string shorten(std::string_view text, std::size_t max_chars) {
  std::size_t chars = 0;
  for (std::size_t i = 0; i < text.size(); ++i) {
    if ((static_cast<unsigned char>(text[i]) & 0xC0) != 0x80) {
      if (chars == max_chars) return std::string(text.substr(0, i)) + "\xE2\x80\xA6";
      ++chars;
    }
  }
  return std::string(text);
}

double clamp01(double x) { return std::clamp(x, 0.0, 1.0); }

// Maps probabilities to the plot area of one diagram (see the file comment).
struct Frame {
  double x0, y0, side;
  double x(double p) const { return x0 + side * clamp01(p); }
  double y(double o) const { return y0 + side * (1.0 - clamp01(o)); }
};

class Svg {
 public:
  std::string out;

  void line(double x1, double y1, double x2, double y2, std::string_view stroke, double width,
            std::string_view dash = {}, std::string_view cls = {}) {
    out += "<line";
    if (!cls.empty()) out += " class=\"" + std::string(cls) + "\"";
    out += " x1=\"" + coord(x1) + "\" y1=\"" + coord(y1) + "\" x2=\"" + coord(x2) + "\" y2=\"" + coord(y2) +
           "\" stroke=\"" + std::string(stroke) + "\" stroke-width=\"" + fixed(width, 2) + "\"";
    if (!dash.empty()) out += " stroke-dasharray=\"" + std::string(dash) + "\"";
    out += "/>\n";
  }
  void rect(double x, double y, double w, double h, std::string_view fill, std::string_view stroke = "none",
            double stroke_width = 0.0, std::string_view cls = {}, std::string_view dash = {}) {
    out += "<rect";
    if (!cls.empty()) out += " class=\"" + std::string(cls) + "\"";
    out += " x=\"" + coord(x) + "\" y=\"" + coord(y) + "\" width=\"" + coord(std::max(0.0, w)) + "\" height=\"" +
           coord(std::max(0.0, h)) + "\" fill=\"" + std::string(fill) + "\"";
    if (stroke != "none")
      out += " stroke=\"" + std::string(stroke) + "\" stroke-width=\"" + fixed(stroke_width, 2) + "\"";
    if (!dash.empty()) out += " stroke-dasharray=\"" + std::string(dash) + "\"";
    out += "/>\n";
  }
  // Start-anchored text that must not run past `max_width`: when its
  // estimated width (0.6 em per character, generous for DejaVu Sans and
  // Helvetica) is larger, textLength squeezes it to fit instead of letting it
  // run into the next diagram.
  void fitted_text(double x, double y, std::string_view content, double size, double max_width, std::string_view cls,
                   std::string_view weight = "normal") {
    std::size_t chars = 0;
    for (const char c : content) chars += (static_cast<unsigned char>(c) & 0xC0) != 0x80;
    out += "<text class=\"" + std::string(cls) + "\" x=\"" + coord(x) + "\" y=\"" + coord(y) + "\" font-size=\"" +
           fixed(size, 1) + "\" fill=\"" + std::string(kInk) + "\"";
    if (weight != "normal") out += " font-weight=\"" + std::string(weight) + "\"";
    if (0.6 * size * static_cast<double>(chars) > max_width) {
      out += " textLength=\"" + coord(max_width) + "\" lengthAdjust=\"spacingAndGlyphs\"";
    }
    out += ">" + xml_escape(content) + "</text>\n";
  }
  // `anchor`: start, middle or end. `rotate`: degrees about (x, y).
  void text(double x, double y, std::string_view content, double size, std::string_view anchor = "start",
            std::string_view cls = {}, double rotate = 0.0, std::string_view weight = "normal",
            std::string_view fill = kInk) {
    out += "<text";
    if (!cls.empty()) out += " class=\"" + std::string(cls) + "\"";
    out += " x=\"" + coord(x) + "\" y=\"" + coord(y) + "\" font-size=\"" + fixed(size, 1) + "\" text-anchor=\"" +
           std::string(anchor) + "\" fill=\"" + std::string(fill) + "\"";
    if (weight != "normal") out += " font-weight=\"" + std::string(weight) + "\"";
    if (rotate != 0.0) out += " transform=\"rotate(" + fixed(rotate, 1) + " " + coord(x) + " " + coord(y) + ")\"";
    out += ">" + xml_escape(content) + "</text>\n";
  }
};

// "ECE 0.0123 [0.0081, 0.0190]": the interval only when the bootstrap gave one.
std::string with_interval(std::string_view name, double value, const BootstrapInterval* interval) {
  std::string s = std::string(name) + " " + metric_text(value);
  if (interval != nullptr && interval->used > 0 && finite(interval->lo) && finite(interval->hi)) {
    s += " " + interval_text(metric_text(interval->lo), metric_text(interval->hi));
  }
  return s;
}

void draw_axes(Svg& svg, const Frame& f, double hist_top, std::string_view x_title = "forecast probability",
               std::string_view y_title = "observed frequency") {
  // Grid and ticks at 0, 0.2, ..., 1; the vertical grid runs on through the
  // histogram strip so the two panels read against one scale.
  const double hist_bottom = hist_top + kHistHeight;
  for (int i = 0; i <= 5; ++i) {
    const double v = i / 5.0;
    const std::string label = fixed_text(v, 1);
    if (i > 0 && i < 5) {
      svg.line(f.x(v), f.y(1.0), f.x(v), f.y(0.0), kGrid, 0.8);
      svg.line(f.x(0.0), f.y(v), f.x(1.0), f.y(v), kGrid, 0.8);
      svg.line(f.x(v), hist_top, f.x(v), hist_bottom, kGrid, 0.8);
    }
    svg.line(f.x(v), f.y(0.0), f.x(v), f.y(0.0) + 4.0, kInk, 0.8);
    svg.line(f.x(v), hist_bottom, f.x(v), hist_bottom + 4.0, kInk, 0.8);
    svg.text(f.x(v), hist_bottom + 16.0, label, 10.0, "middle", "tick");
    svg.line(f.x(0.0) - 4.0, f.y(v), f.x(0.0), f.y(v), kInk, 0.8);
    svg.text(f.x(0.0) - 7.0, f.y(v) + 3.5, label, 10.0, "end", "tick");
  }
  svg.text(f.x(0.5), hist_bottom + 34.0, x_title, 12.0, "middle", "axis-label");
  svg.text(f.x(0.0) - 36.0, f.y(0.5), y_title, 12.0, "middle", "axis-label", -90.0);
}

void draw_band(Svg& svg, const Frame& f, const ScoreSummary& s) {
  // One bar per bin at the bin's mean forecast: bins can be far apart (or
  // empty), so joining them into one area would draw a band where no
  // forecasts are.
  if (s.band.empty()) return;
  const std::size_t n = std::min(s.band.size(), s.table.bins.size());
  svg.out += "<g class=\"band\">\n";
  for (std::size_t b = 0; b < n; ++b) {
    const ReliabilityBin& bin = s.table.bins[b];
    const Interval& band = s.band[b];
    if (!(bin.weight > 0) || !finite(bin.mean_forecast) || !finite(band.lo) || !finite(band.hi)) continue;
    const double half = 6.0;
    const double top = f.y(std::max(band.lo, band.hi));
    const double bottom = f.y(std::min(band.lo, band.hi));
    svg.rect(f.x(bin.mean_forecast) - half, top, 2 * half, std::max(bottom - top, 1.0), kBandFill, kBandEdge, 0.8, {},
             "3 2");
  }
  svg.out += "</g>\n";
}

void draw_curve(Svg& svg, const Frame& f, const ScoreSummary& s) {
  // A step per PAV block over its score range, consecutive steps joined by a
  // straight segment: the fit is only known at the scores seen.
  std::string points;
  std::size_t count = 0;
  for (const PavBlock& block : s.pav_curve) {
    if (!finite(block.score_lo) || !finite(block.score_hi) || !finite(block.value)) continue;
    points += coord(f.x(block.score_lo)) + "," + coord(f.y(block.value)) + " ";
    points += coord(f.x(block.score_hi)) + "," + coord(f.y(block.value)) + " ";
    count += 2;
  }
  if (count < 2) return;
  points.pop_back();
  svg.out += "<polyline class=\"pav-curve\" points=\"" + points + "\" fill=\"none\" stroke=\"" + std::string(kCurve) +
             "\" stroke-width=\"2.2\" stroke-linejoin=\"round\"/>\n";
}

void draw_points(Svg& svg, const Frame& f, const ScoreSummary& s) {
  double max_weight = 0.0;
  for (const ReliabilityBin& bin : s.table.bins) {
    if (finite(bin.weight)) max_weight = std::max(max_weight, bin.weight);
  }
  if (!(max_weight > 0)) return;
  svg.out += "<g class=\"bins\">\n";
  for (const ReliabilityBin& bin : s.table.bins) {
    if (!(bin.weight > 0) || !finite(bin.weight) || !finite(bin.mean_forecast) || !finite(bin.observed)) continue;
    const double cx = f.x(bin.mean_forecast);
    if (finite(bin.observed_lo) && finite(bin.observed_hi)) {
      const double y_lo = f.y(bin.observed_lo);
      const double y_hi = f.y(bin.observed_hi);
      svg.line(cx, y_lo, cx, y_hi, kPoint, 1.2, {}, "whisker");
      svg.line(cx - 3.5, y_lo, cx + 3.5, y_lo, kPoint, 1.2);
      svg.line(cx - 3.5, y_hi, cx + 3.5, y_hi, kPoint, 1.2);
    }
    // Area proportional to the bin's weight, with a floor so a light bin
    // stays visible.
    const double r = 2.5 + 4.5 * std::sqrt(bin.weight / max_weight);
    svg.out += "<circle class=\"bin\" cx=\"" + coord(cx) + "\" cy=\"" + coord(f.y(bin.observed)) + "\" r=\"" +
               coord(r) + "\" fill=\"" + std::string(kPoint) + "\" stroke=\"#ffffff\" stroke-width=\"1\"/>\n";
  }
  svg.out += "</g>\n";
}

void draw_histogram(Svg& svg, const Frame& f, double top, const ScoreSummary& s,
                    std::string_view what = "forecasts") {
  svg.rect(f.x(0.0), top, kPlotSide, kHistHeight, "#ffffff", kInk, 0.8, "histogram-area");
  svg.text(f.x(0.0) - 7.0, top + kHistHeight / 2 + 3.5, what, 10.0, "end", "histogram-label");
  double max_weight = 0.0;
  for (const double w : s.histogram) {
    if (finite(w)) max_weight = std::max(max_weight, w);
  }
  if (s.histogram.empty() || !(max_weight > 0)) return;
  const double k = static_cast<double>(s.histogram.size());
  svg.out += "<g class=\"histogram\">\n";
  for (std::size_t b = 0; b < s.histogram.size(); ++b) {
    const double w = s.histogram[b];
    if (!finite(w) || !(w > 0)) continue;
    const double h = (kHistHeight - 4.0) * w / max_weight;
    const double x0 = f.x(static_cast<double>(b) / k);
    const double x1 = f.x(static_cast<double>(b + 1) / k);
    svg.rect(x0, top + kHistHeight - h, x1 - x0, h, kHistFill, kHistEdge, 0.5);
  }
  svg.out += "</g>\n";
}

void draw_diagram(Svg& svg, const Report& report, const ScoreSummary& s, double left, double top) {
  svg.out += "<g class=\"diagram\">\n";
  const double text_width = kPanelWidth - 2 * kTextLeft;
  svg.fitted_text(left + kTextLeft, top + 20.0, shorten(s.name, kMaxTitleChars), 14.0, text_width, "title", "bold");

  // The subtitle's ECE is the one over the table's binning, which is also the
  // binning the bootstrap re-makes in each replicate.
  const bool mass = report.options.binning == BinningKind::equal_mass;
  const CalibrationError& ece = mass ? s.ece_equal_mass : s.ece_equal_width;
  const BootstrapResult* boot = s.bootstrap ? &*s.bootstrap : nullptr;
  const std::string gap = "  \xC2\xB7  ";  // a middle dot between the figures
  // Short names (the labels' first words) keep three figures with their
  // intervals on one line of a diagram.
  const std::string subtitle = with_interval("ECE", ece.ece, boot ? &boot->ece : nullptr) + gap +
                               with_interval("Brier", s.brier, boot ? &boot->brier : nullptr) + gap +
                               with_interval("MCB", s.corp_brier.mcb, boot ? &boot->mcb_brier : nullptr);
  svg.fitted_text(left + kTextLeft, top + 38.0, subtitle, 11.0, text_width, "subtitle");

  const Frame f{left + kPlotLeft, top + kPlotTop, kPlotSide};
  const double hist_top = f.y(0.0) + kHistGap;
  svg.rect(f.x0, f.y0, kPlotSide, kPlotSide, "#ffffff", "none", 0.0, "plot-area");
  draw_axes(svg, f, hist_top);
  svg.line(f.x(0.0), f.y(0.0), f.x(1.0), f.y(1.0), kDiagonal, 1.2, "6 4", "diagonal");
  draw_band(svg, f, s);
  draw_curve(svg, f, s);
  draw_points(svg, f, s);
  // The frame last, so nothing drawn inside covers its edge.
  svg.rect(f.x0, f.y0, kPlotSide, kPlotSide, "none", kInk, 1.0);
  draw_histogram(svg, f, hist_top, s);
  svg.out += "</g>\n";
}

// One shared legend under the document title, wrapped to `width`. Returns
// the y just below it.
double draw_legend(Svg& svg, bool any_band, double confidence, double left, double y, double width);

double draw_legend(Svg& svg, const Report& report, double left, double y, double width) {
  bool any_band = false;
  for (const ScoreReport& r : report.scores) any_band = any_band || !r.overall.band.empty();
  return draw_legend(svg, any_band, report.options.confidence, left, y, width);
}

double draw_legend(Svg& svg, bool any_band, double confidence, double left, double y, double width) {
  const std::string level = percent_text(confidence);
  // Each entry: its width and how to draw its sample and label at (x, y).
  struct Entry {
    double width;
    int kind;
  };
  std::vector<Entry> entries{{150, 0}, {140, 1}, {215, 2}};
  if (any_band) entries.push_back({190, 3});
  svg.out += "<g class=\"legend\">\n";
  double x = left;
  for (const Entry& e : entries) {
    if (x > left && x + e.width > left + width) {
      x = left;
      y += 22;
    }
    switch (e.kind) {
      case 0:
        svg.line(x, y, x + 26, y, kDiagonal, 1.2, "6 4");
        svg.text(x + 32, y + 4, report_names::diagonal.text, 11.0);
        break;
      case 1:
        svg.line(x, y, x + 26, y, kCurve, 2.2);
        svg.text(x + 32, y + 4, report_names::pav_curve.text, 11.0);
        break;
      case 2:
        svg.line(x + 8, y - 8, x + 8, y + 8, kPoint, 1.2);
        svg.out += "<circle cx=\"" + coord(x + 8) + "\" cy=\"" + coord(y) + "\" r=\"4.5\" fill=\"" +
                   std::string(kPoint) + "\" stroke=\"#ffffff\" stroke-width=\"1\"/>\n";
        svg.text(x + 20, y + 4, "bin mean, " + level + " Wilson interval", 11.0);
        break;
      default:
        svg.rect(x + 2, y - 8, 12, 16, kBandFill, kBandEdge, 0.8, {}, "3 2");
        svg.text(x + 20, y + 4, level + " " + std::string(report_names::consistency_band.text), 11.0);
    }
    x += e.width;
  }
  svg.out += "</g>\n";
  return y + 16;
}

// ---------------------------------------------------------------------------
// The trend (plumb report --history): one panel per TrendSeries, the nights
// spaced evenly left to right. The interval is a pale band (the band's
// violet), the values a slate line with a dot per night (a red ring where a
// night breached a gate), each gate a dashed red rule with its limit, each
// refit a dotted orange rule with the word "refit" above the plot.

constexpr double kTrendPanelHeight = 214.0;
constexpr double kTrendPlotTop = 40.0;  // within a panel
constexpr double kTrendPlotHeight = 110.0;
constexpr double kTrendPlotLeft = 86.0;
constexpr std::string_view kGate = "#a3312a";

bool trend_breach(const Gate& g, double v) { return g.bound == GateBound::max ? !(v <= g.limit) : !(v >= g.limit); }

void draw_trend_panel(Svg& svg, const Report& report, const TrendSeries& s, double left, double top, double width) {
  const std::size_t n = s.points.size();
  const double x0 = left + kTrendPlotLeft, x1 = left + width - 24.0;
  const double y0 = top + kTrendPlotTop, y1 = y0 + kTrendPlotHeight;
  double lo = INFINITY, hi = -INFINITY;
  const auto take = [&](double v) {
    if (finite(v)) {
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
  std::string title = s.column + " \u00b7 " + s.figure + " \u00b7 " + count_text(n) + (n == 1 ? " night" : " nights");
  svg.out += "<g class=\"trend\" data-trend-column=\"" + xml_escape(s.column) + "\" data-trend-figure=\"" +
             xml_escape(s.figure) + "\">\n";
  svg.fitted_text(left + kTextLeft, top + 20, title, 13.0, width - 2 * kTextLeft, "trend-title", "bold");
  if (!finite(lo)) {
    svg.text(x0, y0 + 20, "No night has a value of this figure.", 11.0);
    svg.out += "</g>\n";
    return;
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
  const auto X = [&](std::size_t i) {
    return n == 1 ? 0.5 * (x0 + x1) : x0 + (x1 - x0) * static_cast<double>(i) / static_cast<double>(n - 1);
  };
  const auto Y = [&](double v) { return y1 - (y1 - y0) * (v - lo) / (hi - lo); };

  // Grid and the vertical axis's three values.
  for (int k = 0; k <= 2; ++k) {
    const double v = lo + (hi - lo) * k / 2.0;
    svg.line(x0, Y(v), x1, Y(v), kGrid, 1.0);
    svg.text(x0 - 8, Y(v) + 4, text::trend_value_text(s.figure, v), 10.5, "end");
  }
  // The interval as a band over the nights that have one.
  std::string band;
  std::string band_back;
  for (std::size_t i = 0; i < n; ++i) {
    const TrendPoint& t = s.points[i];
    if (!finite(t.lo) || !finite(t.hi)) continue;
    band += (band.empty() ? "" : " ") + coord(X(i)) + "," + coord(Y(t.hi));
    band_back = coord(X(i)) + "," + coord(Y(t.lo)) + (band_back.empty() ? "" : " ") + band_back;
    svg.line(X(i), Y(t.lo), X(i), Y(t.hi), kBandEdge, 1.0);
  }
  if (!band.empty())
    svg.out += "<polygon class=\"trend-interval\" points=\"" + band + " " + band_back + "\" fill=\"" +
               std::string(kBandFill) + "\" fill-opacity=\"0.7\" stroke=\"none\"/>\n";
  for (std::size_t i = 0; i < n; ++i)
    if (s.points[i].refit) {
      svg.line(X(i), y0 - 6, X(i), y1, kCurve, 1.4, "2 3", "trend-refit");
      svg.text(X(i), y0 - 10, "refit", 10.0, "middle", {}, 0.0, "normal", kCurve);
    }
  for (const Gate& g : s.gates) {
    svg.line(x0, Y(g.limit), x1, Y(g.limit), kGate, 1.4, "7 4", "trend-gate");
    svg.text(x0 + 4, Y(g.limit) - 4,
             std::string(g.bound == GateBound::max ? "gate --max " : "gate --min ") +
                 text::trend_value_text(s.figure, g.limit),
             9.5, "start", {}, 0.0, "normal", kGate);
  }
  std::string path;
  bool pen_down = false;
  for (std::size_t i = 0; i < n; ++i) {
    const double v = s.points[i].value;
    if (!finite(v)) {
      pen_down = false;
      continue;
    }
    path += std::string(pen_down ? " L" : (path.empty() ? "M" : " M")) + coord(X(i)) + " " + coord(Y(v));
    pen_down = true;
  }
  if (!path.empty())
    svg.out += "<path class=\"trend-line\" d=\"" + path + "\" fill=\"none\" stroke=\"" + std::string(kPoint) +
               "\" stroke-width=\"1.8\"/>\n";
  for (std::size_t i = 0; i < n; ++i) {
    const double v = s.points[i].value;
    if (!finite(v)) continue;
    bool breach = false;
    for (const Gate& g : s.gates) breach = breach || trend_breach(g, v);
    if (breach)
      svg.out += "<circle class=\"trend-breach\" cx=\"" + coord(X(i)) + "\" cy=\"" + coord(Y(v)) +
                 "\" r=\"4.2\" fill=\"#ffffff\" stroke=\"" + std::string(kGate) + "\" stroke-width=\"2\"/>\n";
    else
      svg.out += "<circle class=\"trend-point\" cx=\"" + coord(X(i)) + "\" cy=\"" + coord(Y(v)) + "\" r=\"3.2\" fill=\"" +
                 std::string(kPoint) + "\"/>\n";
  }
  svg.rect(x0, y0, x1 - x0, y1 - y0, "none", kInk, 1.0);
  svg.text(x0, y1 + 16, s.points.front().date, 10.5, "start");
  if (n > 1) svg.text(x1, y1 + 16, s.points.back().date, 10.5, "end");
  // The legend names only what the panel draws, on two lines.
  std::string legend = "dots: each night's value";
  std::string legend2;
  bool any_interval = false, any_refit = false;
  for (const TrendPoint& t : s.points) {
    any_interval = any_interval || (finite(t.lo) && finite(t.hi));
    any_refit = any_refit || t.refit;
  }
  if (any_interval) legend += "; band: " + percent_text(report.options.confidence) + " bootstrap interval";
  if (!s.gates.empty()) legend2 = "dashed red: gate; ring: beyond it";
  if (any_refit) legend2 += std::string(legend2.empty() ? "" : "; ") + "dotted orange: refit";
  svg.fitted_text(x0, y1 + 34, legend, 10.5, x1 - x0, "trend-legend");
  if (!legend2.empty()) svg.fitted_text(x0, y1 + 49, legend2, 10.5, x1 - x0, "trend-legend");
  svg.out += "</g>\n";
}

// The trend panels from `top`; returns their height.
double draw_trend(Svg& svg, const Report& report, double left, double top, double width) {
  if (report.trend.empty()) return 0.0;
  svg.text(left, top + 22, "Trend over the history's nights", 15.0, "start", "trend-heading", 0.0, "bold");
  double y = top + 34;
  for (const TrendSeries& s : report.trend) {
    draw_trend_panel(svg, report, s, left, y, width);
    y += kTrendPanelHeight;
  }
  return y - top;
}

}  // namespace

std::string render_svg(const Report& report) {
  const std::size_t n = report.scores.size();
  const std::size_t per_row = std::max<std::size_t>(1, std::min(kPerRow, n));
  const std::size_t rows = n == 0 ? 0 : (n + per_row - 1) / per_row;
  const double width = 2 * kDocMargin + static_cast<double>(per_row) * kPanelWidth;

  // The height depends on how many lines the legend wraps to, so the body is
  // drawn first and the document's opening tag put in front of it.
  Svg svg;
  svg.out.reserve(8192 + n * 16384);
  svg.text(kDocMargin, kDocMargin + 16, "Reliability of " + shorten(report.source, 80), 16.0, "start", "doc-title", 0.0,
           "bold");
  std::string about = "label " + report.label_column;
  if (!report.weight_column.empty()) about += ", weight " + report.weight_column;
  about += "; " + count_text(report.options.bins) + " " +
           std::string(report_names::binning(report.options.binning).text) + " bins";
  if (report.options.bootstrap > 0) {
    about += "; " + percent_text(report.options.confidence) + " bootstrap intervals from " +
             count_text(report.options.bootstrap) + " replicates";
  }
  svg.fitted_text(kDocMargin, kDocMargin + 36, about, 11.0, width - 2 * kDocMargin, "doc-subtitle");
  const double header =
      draw_legend(svg, report, kDocMargin + 4, kDocMargin + kTitleHeight, width - 2 * kDocMargin) + 12.0;

  if (n == 0) svg.text(kDocMargin, header + 30, "No score columns to draw.", 12.0);
  for (std::size_t i = 0; i < n; ++i) {
    const double left = kDocMargin + static_cast<double>(i % per_row) * kPanelWidth;
    const double top = header + static_cast<double>(i / per_row) * kPanelHeight;
    draw_diagram(svg, report, report.scores[i].overall, left, top);
  }
  double height = header + static_cast<double>(std::max<std::size_t>(rows, 1)) * kPanelHeight;
  height += draw_trend(svg, report, kDocMargin, height, width - 2 * kDocMargin);

  std::string doc;
  doc.reserve(svg.out.size() + 1024);
  doc += "<?xml version=\"1.0\" encoding=\"UTF-8\" standalone=\"no\"?>\n";
  doc += "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"" + coord(width) + "\" height=\"" +
         coord(height) + "\" viewBox=\"0 0 " + coord(width) + " " + coord(height) + "\" font-family=\"" +
         std::string(kFontStack) + "\">\n";
  doc += "<title>Reliability diagrams: " + xml_escape(report.source) + "</title>\n";
  doc += "<rect x=\"0\" y=\"0\" width=\"" + coord(width) + "\" height=\"" + coord(height) + "\" fill=\"#ffffff\"/>\n";
  doc += svg.out;
  doc += "</svg>\n";
  return doc;
}

namespace {

// One panel of the multi-class document: a reliability diagram of `s`
// (table, band, PAV curve, histogram) under a title and a subtitle.
void draw_class_panel(Svg& svg, const ScoreSummary& s, std::string_view title, const std::string& subtitle,
                      std::string_view x_title, std::string_view y_title, std::string_view histogram_what,
                      double left, double top) {
  svg.out += "<g class=\"diagram\">\n";
  const double text_width = kPanelWidth - 2 * kTextLeft;
  svg.fitted_text(left + kTextLeft, top + 20.0, shorten(title, kMaxTitleChars), 14.0, text_width, "title", "bold");
  svg.fitted_text(left + kTextLeft, top + 38.0, subtitle, 11.0, text_width, "subtitle");
  const Frame f{left + kPlotLeft, top + kPlotTop, kPlotSide};
  const double hist_top = f.y(0.0) + kHistGap;
  svg.rect(f.x0, f.y0, kPlotSide, kPlotSide, "#ffffff", "none", 0.0, "plot-area");
  draw_axes(svg, f, hist_top, x_title, y_title);
  svg.line(f.x(0.0), f.y(0.0), f.x(1.0), f.y(1.0), kDiagonal, 1.2, "6 4", "diagonal");
  draw_band(svg, f, s);
  draw_curve(svg, f, s);
  draw_points(svg, f, s);
  svg.rect(f.x0, f.y0, kPlotSide, kPlotSide, "none", kInk, 1.0);
  draw_histogram(svg, f, hist_top, s, histogram_what);
  svg.out += "</g>\n";
}

}  // namespace

namespace {

// One model's panels from `top` down: the top-label diagram, then one per
// class, kPerRow to a row. Returns the height drawn.
double draw_class_model(Svg& svg, const ClassReport& report, double top) {
  namespace rn = report_names;
  const std::size_t n = 1 + report.classes.size();
  const std::size_t per_row = kPerRow;
  const std::size_t rows = (n + per_row - 1) / per_row;
  const bool mass = report.options.binning == BinningKind::equal_mass;
  const ClassBootstrapResult* boot = report.bootstrap ? &*report.bootstrap : nullptr;
  const std::string gap = "  \xC2\xB7  ";
  {
    ScoreSummary s;
    s.table = report.top_label_table;
    s.band = report.top_label_band;
    s.pav_curve = report.top_label_pav;
    s.histogram = report.confidence_histogram;
    const CalibrationError& ece = mass ? report.top_label_equal_mass : report.top_label_equal_width;
    // The bootstrap's interval is of the equal-width ECE only.
    const std::string subtitle =
        with_interval("ECE", ece.ece, boot && !mass ? &boot->top_label_ece : nullptr) + gap +
        std::string(rn::accuracy.text) + " " + probability_text(report.accuracy) + gap +
        std::string(rn::confidence_gap.text) + " " + difference_text(report.confidence_gap);
    draw_class_panel(svg, s, "top label (confidence)", subtitle, "confidence (top-label probability)", "accuracy",
                     "confidence", kDocMargin, top);
  }
  for (std::size_t k = 0; k < report.classes.size(); ++k) {
    const ClassSummary& c = report.classes[k];
    ScoreSummary s;
    s.table = c.table;
    s.histogram = c.histogram;
    const CalibrationError& ece = mass ? c.ece_equal_mass : c.ece_equal_width;
    const std::string subtitle = with_interval("ECE", ece.ece, nullptr) + gap + std::string(rn::class_share.text) +
                                 " " + probability_text(c.observed_rate) + gap + "mean forecast " +
                                 probability_text(c.mean_forecast);
    const std::size_t i = k + 1;
    draw_class_panel(svg, s, "class " + c.name + ", one-vs-rest", subtitle, "probability of the class",
                     "observed frequency", "forecasts", kDocMargin + static_cast<double>(i % per_row) * kPanelWidth,
                     top + static_cast<double>(i / per_row) * kPanelHeight);
  }
  return static_cast<double>(rows) * kPanelHeight;
}

// The height of a model's name above its panels.
constexpr double kModelTitleHeight = 28.0;

}  // namespace

std::string render_class_svg(const ClassReport& report) {
  ClassReportSet set;
  set.models.push_back(report);
  set.gates = report.gates;
  return render_class_svg(set);
}

std::string render_class_svg(const ClassReportSet& set) {
  namespace rn = report_names;
  if (set.models.empty()) throw Error(ErrorKind::internal, "render_class_svg: no model");
  const ClassReport& report = set.models.front();
  const bool several = set.models.size() > 1 || report.map;
  const double width = 2 * kDocMargin + static_cast<double>(kPerRow) * kPanelWidth;

  Svg svg;
  svg.out.reserve(8192 + set.models.size() * (1 + report.classes.size()) * 16384);
  svg.text(kDocMargin, kDocMargin + 16, "Reliability of " + shorten(report.source, 80), 16.0, "start", "doc-title", 0.0,
           "bold");
  std::string about = count_text(report.classes.size()) + " classes; label " + report.label_column;
  if (!report.weight_column.empty()) about += ", weight " + report.weight_column;
  about += "; " + count_text(report.options.bins) + " " + std::string(rn::binning(report.options.binning).text) +
           " bins";
  if (report.options.bootstrap > 0)
    about += "; " + percent_text(report.options.confidence) + " bootstrap intervals from " +
             count_text(report.options.bootstrap) + " replicates";
  svg.fitted_text(kDocMargin, kDocMargin + 36, about, 11.0, width - 2 * kDocMargin, "doc-subtitle");
  double height = draw_legend(svg, !report.top_label_band.empty(), report.options.confidence, kDocMargin + 4,
                              kDocMargin + kTitleHeight, width - 2 * kDocMargin) +
                  12.0;
  for (const ClassReport& r : set.models) {
    if (several) {
      std::string title = "model " + r.name;
      if (r.map) title += " (" + r.map->kind + " map)";
      svg.fitted_text(kDocMargin, height + 20.0, title, 14.0, width - 2 * kDocMargin, "model-title", "bold");
      height += kModelTitleHeight;
    }
    height += draw_class_model(svg, r, height);
  }

  std::string doc;
  doc.reserve(svg.out.size() + 1024);
  doc += "<?xml version=\"1.0\" encoding=\"UTF-8\" standalone=\"no\"?>\n";
  doc += "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"" + coord(width) + "\" height=\"" +
         coord(height) + "\" viewBox=\"0 0 " + coord(width) + " " + coord(height) + "\" font-family=\"" +
         std::string(kFontStack) + "\">\n";
  doc += "<title>Multi-class reliability diagrams: " + xml_escape(report.source) + "</title>\n";
  doc += "<rect x=\"0\" y=\"0\" width=\"" + coord(width) + "\" height=\"" + coord(height) + "\" fill=\"#ffffff\"/>\n";
  doc += svg.out;
  doc += "</svg>\n";
  return doc;
}

}  // namespace plumb

namespace plumb {

std::string render_trend_svg(const Report& report) {
  const double width = 2 * kDocMargin + kPanelWidth * static_cast<double>(kPerRow);
  Svg svg;
  const double height = draw_trend(svg, report, kDocMargin, 0.0, width - 2 * kDocMargin) + kDocMargin;
  std::string doc = "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"" + coord(width) +
                    "\" height=\"" + coord(height) + "\" viewBox=\"0 0 " + coord(width) + " " + coord(height) +
                    "\" font-family=\"" + std::string(kFontStack) + "\">\n";
  doc += "<rect x=\"0\" y=\"0\" width=\"" + coord(width) + "\" height=\"" + coord(height) + "\" fill=\"#ffffff\"/>\n";
  doc += svg.out;
  doc += "</svg>\n";
  return doc;
}

}  // namespace plumb
