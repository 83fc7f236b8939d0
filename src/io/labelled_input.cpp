#include "plumb/io/labelled_input.hpp"

#include <algorithm>
#include <cctype>
#include <unordered_map>

#include "plumb/io/csv.hpp"
#include "plumb/error.hpp"

namespace plumb::io {
namespace {

bool equals_ignoring_case(std::string_view a, std::string_view b) noexcept {
  return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) {
           return std::tolower(static_cast<unsigned char>(x)) == std::tolower(static_cast<unsigned char>(y));
         });
}

Location cell(const CsvReader& reader, const Record& record, std::size_t column) {
  Location loc;
  loc.file = reader.name();
  loc.line = record.line;
  loc.column = column + 1;
  loc.column_name = reader.header()[column];
  return loc;
}

}  // namespace

bool is_missing_value(std::string_view text) noexcept {
  while (!text.empty() && (text.front() == ' ' || text.front() == '\t')) text.remove_prefix(1);
  while (!text.empty() && (text.back() == ' ' || text.back() == '\t')) text.remove_suffix(1);
  if (text.empty()) return true;
  if (text.size() > 4) return false;
  char lower[4];
  for (std::size_t i = 0; i < text.size(); ++i)
    lower[i] = static_cast<char>(std::tolower(static_cast<unsigned char>(text[i])));
  const std::string_view t(lower, text.size());
  return t == "na" || t == "nan" || t == "-nan" || t == "+nan" || t == "null" || t == "n/a" || t == "none";
}

namespace {

// 1 or 0, alone or followed by a point and one or more zeros ("1.0", "0.000").
std::optional<double> one_or_zero(std::string_view text) noexcept {
  if (text.empty() || (text[0] != '0' && text[0] != '1')) return std::nullopt;
  if (text.size() > 1) {
    if (text[1] != '.' || text.size() == 2) return std::nullopt;
    for (char c : text.substr(2))
      if (c != '0') return std::nullopt;
  }
  return text[0] == '1' ? 1.0 : 0.0;
}

}  // namespace

std::optional<double> LabelRule::read(std::string_view text) const noexcept {
  if (positive_ && text == *positive_) return 1.0;
  if (negative_ && text == *negative_) return 0.0;
  if (positive_ || negative_) {
    if (is_missing_value(text) || (positive_ && negative_)) return std::nullopt;
    return positive_ ? 0.0 : 1.0;
  }
  if (const std::optional<double> v = one_or_zero(text)) return v;
  if (equals_ignoring_case(text, "true")) return 1.0;
  if (equals_ignoring_case(text, "false")) return 0.0;
  return std::nullopt;
}

bool LabelRule::missing(std::string_view text) const noexcept {
  if ((positive_ && text == *positive_) || (negative_ && text == *negative_)) return false;
  return is_missing_value(text);
}

std::string LabelRule::describe() const {
  if (positive_ && negative_)
    return "'" + *positive_ + "' is positive, '" + *negative_ + "' negative, any other value refused";
  if (positive_) return "'" + *positive_ + "' is positive, any other value negative";
  if (negative_) return "'" + *negative_ + "' is negative, any other value positive";
  return "1/0 or true/false";
}

ScoreProblem score_problem(std::string_view text, Scale scale, std::string_view other_scales_hint) {
  const std::optional<double> v = parse_number(text);
  if (!v) {
    std::string expected = "a decimal number";
    if (scale == Scale::probability) expected += " in [0, 1]";
    return {"the score " + std::string(number_problem(text)), expected};
  }
  // parse_number only returns finite numbers, so the scale's range is left.
  std::string expected = "a probability in [0, 1]";
  if (!other_scales_hint.empty()) expected += " (" + std::string(other_scales_hint) + ")";
  return {"the score lies outside [0, 1]", expected};
}

LabelledRows read_labelled(const std::string& path, const LabelledColumns& columns, const LabelRule& rule,
                           char delimiter, const ProgressCallback& progress, const RowsSink& rows_sink) {
  if (rows_sink && (columns.scores.size() != 1 || !columns.weight.empty() || !columns.segment.empty()))
    throw Error(ErrorKind::internal, "read_labelled: a rows sink takes one unweighted score column only");
  CsvOptions options;
  options.delimiter = delimiter;
  CsvReader reader(path, options);
  std::vector<std::size_t> score_cols;
  for (const ScoreColumn& c : columns.scores) score_cols.push_back(reader.column(c.column, "score"));
  const std::size_t label_col = reader.column(columns.label, "label");
  const bool weighted = !columns.weight.empty();
  const std::size_t weight_col = weighted ? reader.column(columns.weight, "weight") : 0;
  const bool segmented = !columns.segment.empty();
  const std::size_t segment_col = segmented ? reader.column(columns.segment, "segment") : 0;

  LabelledRows out;
  out.source = reader.name();
  out.scores.resize(score_cols.size());
  for (std::size_t c : score_cols) out.score_columns.push_back(reader.header()[c]);
  out.label_column = reader.header()[label_col];
  if (weighted) out.weight_column = reader.header()[weight_col];
  if (segmented) {
    out.segment_column = reader.header()[segment_col];
    out.segment_column_number = segment_col + 1;
  }
  std::unordered_map<std::string, std::uint32_t> segment_index;

  const bool skip = columns.missing == MissingPolicy::skip;
  const std::string skip_hint = "or --missing skip to leave the row out";
  // With a sink the rows leave block by block; the score range is then kept
  // as std::minmax_element reports it (the first smallest, the last largest).
  double lo = 0.0, hi = 0.0;
  auto hand_over = [&] {
    if (out.label.empty()) return;
    for (const double s : out.scores[0]) {
      if (s < lo) lo = s;
      if (!(s < hi)) hi = s;
    }
    rows_sink(out.scores[0], out.label);
    out.scores[0].clear();
    out.label.clear();
  };
  constexpr std::size_t block_rows = 65536;

  Record record;
  while (reader.next(record)) {
    if (skip) {
      bool missing = rule.missing(record.fields[label_col]);
      for (std::size_t k = 0; k < score_cols.size() && !missing; ++k)
        missing = is_missing_value(record.fields[score_cols[k]]);
      if (missing) {
        ++out.skipped;
        out.skipped_lines.push_back(record.line);
        continue;
      }
    }
    for (std::size_t k = 0; k < score_cols.size(); ++k) {
      const std::string_view s = record.fields[score_cols[k]];
      const std::optional<double> score = parse_number(s);
      if (!score || !valid_on_scale(*score, columns.scores[k].scale)) {
        if (is_missing_value(s))
          throw Error(ErrorKind::input, "the score is missing", cell(reader, record, score_cols[k]), std::string(s),
                      "a score (" + skip_hint + ")");
        const ScoreProblem why = score_problem(s, columns.scores[k].scale, columns.other_scales_hint);
        throw Error(ErrorKind::input, why.message, cell(reader, record, score_cols[k]), std::string(s), why.expected);
      }
      out.scores[k].push_back(*score);
    }
    const std::string_view l = record.fields[label_col];
    const std::optional<double> label = rule.read(l);
    if (!label) {
      if (rule.missing(l))
        throw Error(ErrorKind::input, "the label is missing", cell(reader, record, label_col), std::string(l),
                    rule.describe() + " (" + skip_hint + ")");
      const bool named = rule.positive_named() || rule.negative_named();
      throw Error(ErrorKind::input, "the label is neither positive nor negative", cell(reader, record, label_col),
                  std::string(l), rule.describe() + (named ? "" : " (or name the positive value with --positive)"));
    }
    double w = 1.0;
    if (weighted) {
      const std::string_view t = record.fields[weight_col];
      const std::optional<double> parsed = parse_number(t);
      if (!parsed)
        throw Error(ErrorKind::input, "the weight " + std::string(number_problem(t)), cell(reader, record, weight_col),
                    std::string(t), "a finite number >= 0");
      if (*parsed < 0.0)
        throw Error(ErrorKind::input, "the weight is negative", cell(reader, record, weight_col), std::string(t),
                    "a finite number >= 0");
      w = *parsed;
      out.weight.push_back(w);
    }
    if (segmented) {
      const std::string_view v = record.fields[segment_col];
      const auto [it, added] =
          segment_index.try_emplace(std::string(v), static_cast<std::uint32_t>(out.segment_names.size()));
      if (added) {
        if (out.segment_names.size() == columns.max_segment_values)
          throw Error(ErrorKind::input, "the segment column has more than " + std::to_string(columns.max_segment_values) +
                                            " distinct values",
                      cell(reader, record, segment_col), std::string(v), "a column of groups, not of ids");
        out.segment_names.emplace_back(v);
        out.segment_lines.push_back(record.line);
      }
      out.segment.push_back(it->second);
    }
    out.label.push_back(*label);
    out.positives += w * *label;
    out.weight_total += w;
    if (out.rows == 0 && rows_sink) lo = hi = out.scores[0][0];
    ++out.rows;
    if (rows_sink && out.label.size() == block_rows) hand_over();
    if (progress && (out.rows & 0xFFFF) == 0) progress(out.rows, reader.bytes_read(), reader.total_bytes());
  }
  if (rows_sink) hand_over();
  if (out.rows == 0) {
    Location loc;
    loc.file = reader.name();
    if (out.skipped > 0)
      throw Error(ErrorKind::input,
                  "every row has a missing score or label (" + std::to_string(out.skipped) + " rows left out)", loc,
                  {}, "at least one labelled row with a score");
    throw Error(ErrorKind::input, "the file has a header but no data rows", loc, {}, "at least one labelled row");
  }
  if (rows_sink) {
    out.score_min = lo;
    out.score_max = hi;
  } else {
    const auto [first_lo, last_hi] = std::minmax_element(out.scores[0].begin(), out.scores[0].end());
    out.score_min = *first_lo;
    out.score_max = *last_hi;
  }
  out.source_sha256 = reader.content_sha256();
  return out;
}

}  // namespace plumb::io
