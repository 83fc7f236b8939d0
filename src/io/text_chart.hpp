#pragma once
// The reliability chart of the text report, drawn on the character canvas
// (text_canvas.hpp): observed frequency against forecast probability, the
// diagonal, the PAV (CORP) curve, the consistency band, one mark per bin
// (inside or outside its band), the forecast histogram as a strip under the
// x axis, tick labels, axis titles and a legend of what is drawn. In Unicode
// the diagonal and the curve are braille dots and bins whole-cell marks; in
// ASCII everything is drawn at cell resolution.
#include "plumb/report.hpp"
#include "text_layout.hpp"

namespace plumb::text {

// The chart of one score column into `doc`: up to 61 columns of plot after
// an 8-column axis margin; nothing when the width leaves fewer than 12.
void render_chart(Document& doc, const Painter& p, const Report& report, const ScoreSummary& s);

}  // namespace plumb::text
