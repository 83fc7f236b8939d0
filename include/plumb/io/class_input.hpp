#pragma once
// Reading the rows of a K-class classifier (K score columns, a label column
// of class names, an optional weight) from a CSV/TSV file, plain or gzip, or
// standard input, into a plumb::ClassScores, with every value checked and
// every refusal located by file, line, column and column name.
//
// The refusals' advice names options of the commands that read K-class rows
// (fit, cross-fit, report): --scores, --classes, --scale, --missing and
// --sum-tolerance; a command that calls this reader offers them all.
#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/class_scores.hpp"
#include "plumb/io/labelled_input.hpp"

namespace plumb::io {

class CsvReader;

// The widest |sum - 1| accepted for a row of K probabilities unless the
// caller states another: a dump of probabilities rounded to 4 decimals can
// miss 1 by K * 0.00005, and a float32 softmax by far less.
inline constexpr double default_sum_tolerance = 1e-3;

struct ClassColumns {
  // The K score columns. Either a list of columns (names or 1-based
  // indexes), each one class named by its header, or one pattern holding a
  // single '*' ("p_*", "*_prob"): every header matching it, in header order,
  // each class named by the text the '*' stands for.
  std::vector<std::string> scores;
  ClassScale scale = ClassScale::probability;
  // The label column (name or 1-based index); empty reads unlabelled rows.
  std::string label;
  // The class order (empty: the order of the score columns). When given it
  // must name exactly the classes of the score columns, each once.
  std::vector<std::string> classes;
  std::string weight;  // empty: every row weighs 1
  // A column whose values are read verbatim as texts: report --by's segment,
  // or cross-fit's group, time or fold column; empty reads none. It may not
  // be a score column. segment_role names it in messages ("segment",
  // "split"). At most max_segment_values distinct values.
  std::string segment;
  std::string segment_role = "segment";
  std::size_t max_segment_values = 100000;
  // A row with a missing score or label: refuse (default) or skip.
  MissingPolicy missing = MissingPolicy::refuse;
  // Probability scale: the widest |sum of the row's K values - 1| accepted.
  double sum_tolerance = default_sum_tolerance;
};

// The columns of a header resolved: the file column (0-based) of each class
// in class order, and the class names.
struct ClassLayout {
  std::vector<std::string> classes;
  std::vector<std::size_t> score_column;  // one per class, in class order
  std::vector<std::string> score_header;  // the header name of each, in class order
  std::optional<std::size_t> label_column, weight_column, segment_column;
};

// Resolves `columns` against the header of `reader`. Throws plumb::Error:
// usage for a pattern without exactly one '*', for --classes naming a class
// twice, a class no score column holds, or leaving one out; input (located
// at line 1 on the column) for a score column named twice, a pattern
// matching fewer than two columns, one score column (K = 1), and a label,
// weight or segment column that is also a score column.
ClassLayout resolve_class_columns(const CsvReader& reader, const ClassColumns& columns);

// The problem with one row's K values (already parsed) on `scale`: nullopt
// when they are acceptable. On the probability scale each value lies in
// [0, 1] and their sum within `sum_tolerance` of 1; on the logit scale each
// is finite (parse_number gives only finite numbers, so this is a check of
// the contract). `worst` is set to the index of the value to locate.
struct ClassRowProblem {
  std::string message;
  std::string expected;
  std::size_t column = 0;  // index into the row's values of the cell to locate
};
// `sum_advice` and `range_advice` close the expectation of a bad sum and of
// a probability outside [0, 1] in the caller's words, naming its options;
// the defaults are those of the commands that take --sum-tolerance and
// --scale (fit, cross-fit, report).
inline constexpr std::string_view default_sum_advice = "or --sum-tolerance to widen it, or --scale logit for logits";
inline constexpr std::string_view default_range_advice = "or --scale logit for scores on the logit scale";
std::optional<ClassRowProblem> class_row_problem(const double* values, std::size_t k, ClassScale scale,
                                                 double sum_tolerance, std::string_view sum_advice = default_sum_advice,
                                                 std::string_view range_advice = default_range_advice);

struct ClassRows {
  ClassScores data;
  std::vector<std::string> score_columns;  // header names, in class order
  std::string source;                      // file name in messages, "<stdin>" for standard input
  std::string source_sha256;               // SHA-256 of the input bytes
  std::string label_column, weight_column; // resolved header names (empty when not read)
  std::uint64_t skipped = 0;               // rows left out under MissingPolicy::skip
  std::vector<std::uint64_t> skipped_lines;
  // The physical line of each row kept (for messages that point at a row).
  std::vector<std::uint64_t> lines;
  // With ClassColumns::segment: per row an index into segment_names (the
  // column's distinct texts, as read, in order of first appearance), the
  // physical line of each value's first row, the resolved header name and
  // its 1-based column number. Empty (0) without a segment column.
  std::vector<std::uint32_t> segment;
  std::vector<std::string> segment_names;
  std::vector<std::uint64_t> segment_lines;
  std::string segment_column;
  std::size_t segment_column_number = 0;
};

// Reads every data row of `path` ("-" for standard input). Refuses, with
// plumb::Error(input) naming file, line, column, column name, value and what
// was expected: the column problems of resolve_class_columns; a missing
// score or label (is_missing_value) unless columns.missing is skip; a score
// that is not a decimal number or not finite (an infinite logit); a
// probability outside [0, 1] or a row of probabilities whose sum misses 1 by
// more than columns.sum_tolerance; a label with spaces or tabs around it; a
// label that is not one of the classes; a weight that is not a finite
// number >= 0; a segment column that is a score column or holds more than
// columns.max_segment_values distinct values; and a file with no data rows left. The labels come back as
// class indexes; the values as read (a row of probabilities within the
// tolerance is not rescaled here).
ClassRows read_class_scores(const std::string& path, const ClassColumns& columns, char delimiter = 0);

}  // namespace plumb::io
