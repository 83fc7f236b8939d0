// Fuzz target for io::read_labelled (plumb/io/labelled_input.hpp) with the
// columns score, label and weight.
//
// Input layout: byte 0 chooses the options (bits 0-1: the score's scale,
// probability, logit or margin; bit 2: weighted by the column "weight";
// bit 3: labels read with --positive "late" instead of 1/0, true/false;
// bit 4: a segment column "segment"; bit 5: tab-separated instead of
// detected; bit 6: --missing skip); the rest is the text.
//
// Invariants beyond "no crash":
//  - only plumb::Error escapes;
//  - accepted input has at least one row; every vector has one entry per
//    row; scores are finite and valid on their scale (in [0, 1] on the
//    probability scale); labels are 0 or 1; weights are finite and >= 0;
//    the totals, score range and segments agree with the rows;
//  - the rows are the CSV reader's records, one for one, and the label of
//    each is what LabelRule::read says of its text; under --missing skip,
//    the records left out are exactly those with a missing score or label.
#include <algorithm>
#include <cmath>
#include <string>

#include "fuzz_support.hpp"
#include "plumb/io/csv.hpp"
#include "plumb/io/labelled_input.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size < 1) return 0;
  const std::uint8_t flags = data[0];
  const std::string_view text(reinterpret_cast<const char*>(data) + 1, size - 1);

  plumb::io::LabelledColumns columns;
  const plumb::Scale scale = (flags & 3) == 1 ? plumb::Scale::logit
                             : (flags & 3) == 2 ? plumb::Scale::margin
                                                : plumb::Scale::probability;
  columns.scores.push_back({"score", scale});
  columns.label = "label";
  if (flags & 4) columns.weight = "weight";
  if (flags & 16) {
    columns.segment = "segment";
    columns.max_segment_values = 8;
  }
  const plumb::io::LabelRule rule = (flags & 8) ? plumb::io::LabelRule(std::string("late")) : plumb::io::LabelRule();
  const char delimiter = (flags & 32) ? '\t' : 0;
  if (flags & 64) columns.missing = plumb::io::MissingPolicy::skip;

  const plumb::fuzz::MemoryFile file(text);
  plumb::io::LabelledRows rows;
  const bool accepted = plumb::fuzz::only_plumb_errors(
      [&] { rows = plumb::io::read_labelled(file.path(), columns, rule, delimiter); });
  if (!accepted) return 0;

  const std::size_t n = rows.label.size();
  FUZZ_CHECK(n >= 1 && rows.rows == n, "rows = " + std::to_string(rows.rows) + ", labels " + std::to_string(n));
  FUZZ_CHECK(rows.scores.size() == 1 && rows.scores[0].size() == n, "not one score per row");
  FUZZ_CHECK(rows.weight.size() == ((flags & 4) ? n : 0), "not one weight per row");
  FUZZ_CHECK(rows.segment.size() == ((flags & 16) ? n : 0), "not one segment per row");
  double positives = 0.0, total = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double s = rows.scores[0][i];
    FUZZ_CHECK(std::isfinite(s) && plumb::valid_on_scale(s, scale), "row " + std::to_string(i) + ": invalid score");
    if (scale == plumb::Scale::probability)
      FUZZ_CHECK(s >= 0.0 && s <= 1.0, "a probability outside [0, 1]: " + std::to_string(s));
    FUZZ_CHECK(rows.label[i] == 0.0 || rows.label[i] == 1.0, "a label other than 0 or 1");
    const double w = rows.weight.empty() ? 1.0 : rows.weight[i];
    FUZZ_CHECK(std::isfinite(w) && w >= 0.0, "a weight that is negative or not finite: " + std::to_string(w));
    if (!rows.segment.empty())
      FUZZ_CHECK(rows.segment[i] < rows.segment_names.size(), "a segment index out of range");
    positives += w * rows.label[i];
    total += w;
  }
  FUZZ_CHECK(rows.positives == positives && rows.weight_total == total, "totals disagree with the rows");
  const auto [lo, hi] = std::minmax_element(rows.scores[0].begin(), rows.scores[0].end());
  FUZZ_CHECK(rows.score_min == *lo && rows.score_max == *hi, "score range disagrees with the rows");
  FUZZ_CHECK(rows.segment_names.size() <= columns.max_segment_values, "more segments than allowed");
  FUZZ_CHECK(rows.score_columns.size() == 1 && rows.score_columns[0] == "score" && rows.label_column == "label",
             "resolved column names are not the ones asked for");

  // Second route: the records as the CSV reader gives them.
  plumb::io::CsvOptions options;
  options.delimiter = delimiter;
  plumb::io::CsvReader reader(file.path(), options);
  const std::size_t label_col = reader.column("label", "label");
  const std::size_t score_col = reader.column("score", "score");
  plumb::io::Record record;
  std::size_t i = 0, skipped = 0;
  while (reader.next(record)) {
    const bool missing =
        rule.missing(record.fields[label_col]) || plumb::io::is_missing_value(record.fields[score_col]);
    if (skipped < rows.skipped_lines.size() && rows.skipped_lines[skipped] == record.line) {
      FUZZ_CHECK((flags & 64) && missing, "a record without a missing value was left out");
      ++skipped;
      continue;
    }
    FUZZ_CHECK(!missing, "a record with a missing score or label was read as a row");
    FUZZ_CHECK(i < n, "read_labelled returned fewer rows than the file has records");
    FUZZ_CHECK(rule.read(record.fields[label_col]) == rows.label[i], "a label is not what LabelRule reads");
    FUZZ_CHECK(plumb::io::parse_number(record.fields[score_col]) == rows.scores[0][i],
               "a score is not what parse_number reads");
    ++i;
  }
  FUZZ_CHECK(i == n, "read_labelled returned more rows than the file has records");
  FUZZ_CHECK(skipped == rows.skipped_lines.size() && rows.skipped == skipped, "the rows left out disagree");
  return 0;
}
