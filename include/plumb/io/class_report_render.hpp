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
// Several models side by side: one heading, a table of every model's
// headline figures, then each model's sections under its name, the gates
// (with the model each read) and every model's cautions. A set of one model
// without a map renders as that model alone.
std::string render_class_text(const ClassReportSet& set, const TextStyle& style);

// Every number of the report (docs/report-format.md, "The multi-class
// document"); non-finite numbers as null. Its `format` is
// "plumb-class-report" (version 1), so that no reader of the binary
// report's document takes it for one.
nlohmann::json class_report_to_json(const ClassReport& report);
// A set of models: version 1 as above for one model without a map (its
// members at the top level); else version 2, whose `models` array holds each
// model's members with its `name`, `map` (the artifact's identity, null for
// the scores as read) and `cautions`, and whose gates name their `model`.
nlohmann::json class_report_to_json(const ClassReportSet& set);

// A standalone SVG document: the top-label reliability diagram (confidence
// against accuracy: the diagonal, the consistency band, the PAV curve, bin
// points with Wilson intervals, the confidence histogram beneath) and one
// small one-vs-rest reliability diagram per class. Well-formed XML, no
// scripts.
std::string render_class_svg(const ClassReport& report);
// Several models: each model's diagrams under its name, one row per model.
std::string render_class_svg(const ClassReportSet& set);

// A Markdown document: the headline table, the top-label reliability table,
// the per-class table and reliability tables, and the cautions.
std::string render_class_markdown(const ClassReport& report);
// Several models: a table of every model's headline figures, then each
// model's sections under its name, the gates and the cautions.
std::string render_class_markdown(const ClassReportSet& set);

}  // namespace plumb
