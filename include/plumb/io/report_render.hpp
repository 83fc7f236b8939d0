#pragma once
// The renderers of a Report (report.hpp). Each returns the whole document as
// a string; the CLI writes it atomically. None reads the environment: what
// the terminal can show is passed in.
#include <nlohmann/json.hpp>
#include <string>

#include "plumb/report.hpp"

namespace plumb {

struct TextStyle {
  bool unicode = true;  // block and box characters; false: ASCII only
  bool colour = false;  // ANSI colours (the CLI sets it only for a terminal without NO_COLOR)
  int width = 80;       // no line is wider than this (in terminal columns)
};

// The terminal report: per score column the headline metrics with their
// intervals, the reliability table and a reliability chart; segments; gates;
// cautions. Every line fits style.width columns. Sections open with a title
// after a left bar ("\u258c title"; "[title]" in ASCII). A segment table shows
// at most 20 rows (every flagged segment, then the largest by weight) and
// says how many it left out. Figures carry the names of src/io/report_names.hpp.
std::string render_text(const Report& report, const TextStyle& style);

// Every number of the report (docs/report-format.md, docs/report.schema.json),
// every segment included. Non-finite numbers are written as null.
nlohmann::json report_to_json(const Report& report);

// A standalone SVG document: one reliability diagram per score column
// (forecast probability against observed frequency: the diagonal, the
// consistency band, the PAV (CORP) curve, bin points with Wilson intervals) with a
// histogram of the forecasts beneath. Well-formed XML, no scripts, prints
// on one page per few columns.
std::string render_svg(const Report& report);

// The trend panels alone (Report::trend) as an SVG element without an XML
// declaration, for the review page; render_svg draws the same panels under
// the diagrams when the report has a trend. Without a trend: an SVG of its
// margin only.
std::string render_trend_svg(const Report& report);

// The review page: one self-contained HTML document (inline CSS and SVG, no
// script, no font or other resource, a content security policy that loads
// nothing): headline figures with intervals, gates, the reliability chart
// and its tables, segments, the trend when the report has one, the maps'
// provenance, and the cautions (the report's and the standing one on
// credit, insurance and health). Every table has header cells with scope,
// every chart role="img" with a title and a description, and each headline
// figure data-column, data-figure and data-value attributes
// (docs/review-page.md).
std::string render_html(const Report& report);

// A Markdown document to paste into a review: headline tables, reliability
// tables, segments (capped as in the text), gates, cautions. Numbers follow
// the text report's formats, one per column.
std::string render_markdown(const Report& report);

}  // namespace plumb
