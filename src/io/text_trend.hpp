#pragma once
// The trend section of the text report (plumb report --history): each
// figure of Report::trend over the nights, drawn on the character canvas
// (text_canvas.hpp) as the reliability chart is: the nights' intervals as
// shaded cells, the values joined by a line (braille dots; ASCII characters
// a cell each), one mark per night (a cross where the night breached a
// gate), the gate limits as a row of rule characters and the refits marked
// above the plot; then the axis with the first and last night, and a legend
// of what is drawn.
#include "plumb/report.hpp"
#include "text_layout.hpp"

namespace plumb::text {

// The figure's value in its number rule (plumb/number_text.hpp): a
// difference for calibration_in_the_large, a p-value for the *_p figures,
// a metric for the others.
std::string trend_value_text(const std::string& figure, double value);

// The section into `doc`; nothing when the report has no trend or the
// width leaves fewer than 12 columns of plot.
void render_trend(Document& doc, const Painter& p, const Report& report);

}  // namespace plumb::text
