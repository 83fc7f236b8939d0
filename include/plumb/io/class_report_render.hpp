#pragma once
// The renderers of a multi-class report (class_report.hpp), as
// report_render.hpp's are of the binary one: each returns the whole
// document as a string, and none reads the environment. Names come from
// src/io/report_names.hpp and figures follow plumb/number_text.hpp.
#include <nlohmann/json.hpp>
#include <string>

#include "plumb/class_report.hpp"
#include "plumb/io/report_render.hpp"

namespace plumb {

// The terminal report: a heading, the headline figures (each with its
// bootstrap interval when there is one), the top-label reliability table and
// chart (confidence against accuracy, drawn as the binary chart is), the
// per-class table (one-vs-rest figures), each class's reliability table, and
// the cautions. Every line fits style.width columns.
std::string render_class_text(const ClassReport& report, const TextStyle& style);

// Every number of the report (docs/report-format.md, "The multi-class
// document"); non-finite numbers as null. Its `format` is
// "plumb-class-report" (version 1), so that no reader of the binary
// report's document takes it for one.
nlohmann::json class_report_to_json(const ClassReport& report);

// A standalone SVG document: the top-label reliability diagram (confidence
// against accuracy: the diagonal, the consistency band, the PAV curve, bin
// points with Wilson intervals, the confidence histogram beneath) and one
// small one-vs-rest reliability diagram per class. Well-formed XML, no
// scripts.
std::string render_class_svg(const ClassReport& report);

// A Markdown document: the headline table, the top-label reliability table,
// the per-class table and reliability tables, and the cautions.
std::string render_class_markdown(const ClassReport& report);

}  // namespace plumb
