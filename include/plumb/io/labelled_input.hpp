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

// Whether a cell holds one of the common spellings of a missing value:
// empty (or only spaces and tabs), NA, NaN (also -nan and +nan, as C's printf
// writes it), null, n/a or None, in any letter case, with surrounding spaces
// and tabs ignored. The one definition every reader uses (labelled rows,
// apply's record and block parsers), for scores and labels alike.
bool is_missing_value(std::string_view text) noexcept;

// What a command does with a row whose score (or label) is missing:
//   refuse: stop with an error located by file, line and column (default);
//   skip:   leave the row out and count it;
//   empty:  (apply only) pass the row through with an empty probability.
enum class MissingPolicy { refuse, skip, empty };

// How a label cell is read as an outcome. Values are compared exactly
// (letter case and spaces count), except the default spellings below.
//   Neither value named: 1, 0, 1.0, 0.0 (a 1 or 0 followed by a point and one
//   or more zeros, as float dumps write them) and true/false in any letter
//   case; anything else is refused.
//   --positive P alone: P is positive; any other value negative.
//   --negative N alone: N is negative; any other value positive.
//   Both: P positive, N negative, anything else refused.
// A missing value (is_missing_value) is never a label unless it is the named
// positive or negative value: read() refuses it and missing() says so.
class LabelRule {
 public:
  LabelRule() = default;
  // Precondition: positive and negative differ when both are given (the
  // command line checks, Error(usage)).
  explicit LabelRule(std::optional<std::string> positive, std::optional<std::string> negative = std::nullopt)
      : positive_(std::move(positive)), negative_(std::move(negative)) {}
  // 1.0 or 0.0; nullopt when the text is not a label under this rule.
  std::optional<double> read(std::string_view text) const noexcept;
  // Whether `text` is a missing value this rule does not name (read() then
  // gives nullopt).
  bool missing(std::string_view text) const noexcept;
  // What the rule accepts, for messages and provenance ("1/0 or true/false",
  // "'late' is positive, any other value negative", "'late' is positive,
  // 'on_time' negative, any other value refused").
  std::string describe() const;
  bool positive_named() const noexcept { return positive_.has_value(); }
  bool negative_named() const noexcept { return negative_.has_value(); }

 private:
  std::optional<std::string> positive_, negative_;
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
  // A row with a missing score (in any requested score column) or a missing
  // label: refuse or skip (empty is apply's alone and reads as refuse here).
  MissingPolicy missing = MissingPolicy::refuse;
  // Appended to the refusal of a probability score outside [0, 1]: how the
  // calling command reads other scores ("give --scale logit ..."), in terms
  // of that command's own options. Empty: no advice.
  std::string other_scales_hint{};
};

struct LabelledRows {
  std::vector<std::vector<double>> scores;  // one vector per requested score column, in order
  std::vector<std::string> score_columns;   // their resolved header names
  std::vector<double> label, weight;        // weight empty when unweighted
  std::vector<std::uint32_t> segment;       // per row, an index into segment_names (empty without segments)
  std::vector<std::string> segment_names;   // in order of first appearance
  std::vector<std::uint64_t> segment_lines; // the physical line of each segment value's first row
  std::string source;                       // file name in messages, "<stdin>" for standard input
  std::string source_sha256;                // SHA-256 of the input bytes
  std::string label_column, weight_column, segment_column;  // resolved header names
  std::size_t segment_column_number = 0;    // 1-based; 0 without segments
  std::uint64_t rows = 0;
  // Rows left out under MissingPolicy::skip, and their physical lines in
  // input order (for a second pass over the same file).
  std::uint64_t skipped = 0;
  std::vector<std::uint64_t> skipped_lines;
  double positives = 0.0;     // weight of positive rows
  double weight_total = 0.0;
  double score_min = 0.0, score_max = 0.0;  // of the first score column
};

// Reads every data row of `path` ("-" for standard input). Refuses, with
// plumb::Error(input) naming file, line, column, value and what was expected:
// a missing column, an empty file or one with a header and no rows left, a
// missing score or label (is_missing_value) unless columns.missing is skip
// (then the row is left out and counted in `skipped`), a score that is not a
// decimal number, infinite or outside its column's scale (for `probability`,
// outside [0, 1]), a label the rule does not read, and a
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
// number", "lies outside [0, 1]"), and what would have been accepted. For a
// number outside [0, 1], `other_scales_hint` (the caller's advice, naming
// options of its own command; may be empty) follows in parentheses.
struct ScoreProblem {
  std::string message;
  std::string expected;
};
ScoreProblem score_problem(std::string_view text, Scale scale, std::string_view other_scales_hint = {});

}  // namespace plumb::io
