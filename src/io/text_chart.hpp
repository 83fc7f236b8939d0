#pragma once
// The reliability chart of the text report, drawn on the character canvas
// (text_canvas.hpp): observed frequency against forecast probability, the
// diagonal, the PAV (CORP) curve, the consistency band, one mark per bin
// (inside or outside its band), the forecast histogram as a strip under the
// x axis, tick labels, axis titles and a legend of what is drawn. In Unicode
// the diagonal and the curve are braille dots and bins whole-cell marks; in
// ASCII everything is drawn at cell resolution.
#include "plumb/report.hpp"
#include "report_names.hpp"
#include "text_layout.hpp"

#include <string>

namespace plumb::text {

// The chart of one score column into `doc`: up to 61 columns of plot after
// an 8-column axis margin; nothing when the width leaves fewer than 12.
void render_chart(Document& doc, const Painter& p, const Report& report, const ScoreSummary& s);

// The words of a chart: its axis titles and what its legend calls the bin
// marks' position, the diagonal and the histogram. The defaults are the
// binary report's.
struct ChartWords {
  std::string y_title = "observed frequency";
  std::string x_title = "forecast probability";
  std::string bin_at = "mean forecast";
  std::string diagonal = std::string(report_names::diagonal.text);
  std::string histogram = "forecast histogram";
};

// The same chart of any reliability data: it reads s.table, s.band,
// s.pav_curve and s.histogram only; `confidence` is the band's level.
void render_chart(Document& doc, const Painter& p, double confidence, const ScoreSummary& s, const ChartWords& words);

}  // namespace plumb::text
