#pragma once
// Reading labelled scores (score, label, optional weight) from a CSV/TSV
// file or standard input, with every value checked and every refusal
// located by file, line and column.
#include <cstdint>
#include <functional>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/scale.hpp"

namespace plumb::io {

// How a label cell is read as an outcome.
//   No positive value given: "1"/"0" and "true"/"false" (any letter case);
//   anything else is refused.
//   A positive value given (`--positive late`): that exact text is the
//   positive outcome and every other non-empty value is negative.
// An empty label is always refused.
class LabelRule {
 public:
  LabelRule() = default;
  explicit LabelRule(std::optional<std::string> positive) : positive_(std::move(positive)) {}
  // 1.0 or 0.0; nullopt when the text is not a label under this rule.
  std::optional<double> read(std::string_view text) const noexcept;
  // What the rule accepts, for messages and provenance ("1/0 or true/false",
  // "'late' is positive, any other value negative").
  std::string describe() const;

 private:
  std::optional<std::string> positive_;
};

struct ScoreColumn {
  std::string column;  // name or 1-based index
  Scale scale = Scale::probability;
};

struct LabelledColumns {
  std::vector<ScoreColumn> scores;  // at least one
  std::string label;
  std::string weight;   // empty: every row weighs 1
  std::string segment;  // empty: no segments
  // More distinct segment values than this is an input error (a report's
  // segment column that is really an id); cross-fit's group and time
  // columns may hold one value per row.
  std::size_t max_segment_values = 100000;
};

struct LabelledRows {
  std::vector<std::vector<double>> scores;  // one vector per requested score column, in order
  std::vector<std::string> score_columns;   // their resolved header names
  std::vector<double> label, weight;        // weight empty when unweighted
  std::vector<std::uint32_t> segment;       // per row, an index into segment_names (empty without segments)
  std::vector<std::string> segment_names;   // in order of first appearance
  std::string source;                       // file name in messages, "<stdin>" for standard input
  std::string source_sha256;                // SHA-256 of the input bytes
  std::string label_column, weight_column, segment_column;  // resolved header names
  std::uint64_t rows = 0;
  double positives = 0.0;     // weight of positive rows
  double weight_total = 0.0;
  double score_min = 0.0, score_max = 0.0;  // of the first score column
};

// Reads every data row of `path` ("-" for standard input). Refuses, with
// plumb::Error(input) naming file, line, column, value and what was expected:
// a missing column, an empty file or one with a header and no rows, a score
// that is empty, not a decimal number, NaN, infinite or outside its column's
// scale (for `probability`, outside [0, 1]), a label the rule does not read, and a
// weight that is empty, not a number or negative, and more than
// columns.max_segment_values distinct segment values. `progress` (may be empty)
// is called every 65536 rows, for progress reports.
//
// `rows_sink` (may be empty) takes the rows instead of the result: it is
// called, in input order, with blocks of at most 65536 rows (the first score
// column and the labels), and each block is then dropped, so the result's
// per-row vectors (scores, label, weight, segment) come back empty while
// every total, name, range and the hash are as without it. Only for a read
// of one score column, unweighted and without segments (Error(internal)
// otherwise). A throw from the sink ends the read and propagates.
using ProgressCallback =
    std::function<void(std::uint64_t rows, std::uint64_t bytes, std::optional<std::uint64_t> total_bytes)>;
using RowsSink = std::function<void(std::span<const double> score, std::span<const double> label)>;
LabelledRows read_labelled(const std::string& path, const LabelledColumns& columns, const LabelRule& rule,
                           char delimiter = 0, const ProgressCallback& progress = {},
                           const RowsSink& rows_sink = {});

// The message part for a score refused on `scale` ("is not a decimal
// number", "lies outside [0, 1]"), and what would have been accepted.
struct ScoreProblem {
  std::string message;
  std::string expected;
};
ScoreProblem score_problem(std::string_view text, Scale scale);

}  // namespace plumb::io
