#include "plumb/io/class_input.hpp"

#include <cmath>
#include <unordered_map>

#include "plumb/error.hpp"
#include "plumb/io/csv.hpp"
#include "plumb/number_text.hpp"

namespace plumb::io {
namespace {

Location header_cell(const CsvReader& reader, std::size_t column) {
  Location loc;
  loc.file = reader.name();
  loc.line = 1;
  loc.column = column + 1;
  loc.column_name = reader.header()[column];
  return loc;
}

Location cell(const CsvReader& reader, const Record& record, std::size_t column) {
  Location loc;
  loc.file = reader.name();
  loc.line = record.line;
  loc.column = column + 1;
  loc.column_name = reader.header()[column];
  return loc;
}

std::string joined(const std::vector<std::string>& names) {
  std::string out;
  for (const std::string& n : names) out += (out.empty() ? "" : ", ") + n;
  return out;
}

bool has_stray_space(std::string_view t) noexcept {
  return !t.empty() && (t.front() == ' ' || t.front() == '\t' || t.back() == ' ' || t.back() == '\t');
}

}  // namespace

ClassLayout resolve_class_columns(const CsvReader& reader, const ClassColumns& columns) {
  const std::vector<std::string>& header = reader.header();
  std::vector<std::size_t> cols;
  std::vector<std::string> names;
  const bool pattern = columns.scores.size() == 1 && columns.scores[0].find('*') != std::string::npos;
  if (pattern) {
    const std::string& p = columns.scores[0];
    const std::size_t star = p.find('*');
    if (p.find('*', star + 1) != std::string::npos)
      throw Error(ErrorKind::usage, "a --scores pattern holds more than one '*'", {}, p,
                  "one '*' standing for the class name, as in p_*");
    const std::string prefix = p.substr(0, star), suffix = p.substr(star + 1);
    for (std::size_t c = 0; c < header.size(); ++c) {
      const std::string& h = header[c];
      if (h.size() > prefix.size() + suffix.size() && h.compare(0, prefix.size(), prefix) == 0 &&
          h.compare(h.size() - suffix.size(), suffix.size(), suffix) == 0) {
        cols.push_back(c);
        names.push_back(h.substr(prefix.size(), h.size() - prefix.size() - suffix.size()));
      }
    }
    if (cols.size() < 2) {
      Location loc;
      loc.file = reader.name();
      loc.line = 1;
      if (cols.size() == 1) loc = header_cell(reader, cols[0]);
      throw Error(ErrorKind::input,
                  cols.empty() ? "no column matches the --scores pattern"
                               : "only one column matches the --scores pattern (K = 1)",
                  loc, p, "two or more score columns, one per class (a binary score takes --score)");
    }
  } else {
    std::unordered_map<std::size_t, std::size_t> seen;
    for (const std::string& spec : columns.scores) {
      const std::size_t c = reader.column(spec, "score");
      if (!seen.try_emplace(c, cols.size()).second)
        throw Error(ErrorKind::input, "a score column is named twice in --scores", header_cell(reader, c), spec,
                    "each class's score column once");
      cols.push_back(c);
      names.push_back(header[c]);
    }
    if (cols.size() < 2) {
      Location loc;
      loc.file = reader.name();
      loc.line = 1;
      if (cols.size() == 1) loc = header_cell(reader, cols[0]);
      throw Error(ErrorKind::input, "one score column is one class (K = 1)", loc,
                  columns.scores.empty() ? std::string() : columns.scores[0],
                  "two or more score columns, one per class (a binary score takes --score)");
    }
  }

  ClassLayout out;
  if (columns.classes.empty()) {
    out.classes = names;
    out.score_column = cols;
  } else {
    std::unordered_map<std::string, std::size_t> position;
    for (std::size_t i = 0; i < names.size(); ++i) position.emplace(names[i], i);
    std::unordered_map<std::string, bool> named;
    for (const std::string& c : columns.classes) {
      if (!named.emplace(c, true).second)
        throw Error(ErrorKind::usage, "--classes names a class twice", {}, c, "each class once");
      const auto it = position.find(c);
      if (it == position.end())
        throw Error(ErrorKind::usage, "--classes names a class that no score column holds", {}, c,
                    "one of the classes of the score columns: " + joined(names));
      out.classes.push_back(c);
      out.score_column.push_back(cols[it->second]);
    }
    for (std::size_t i = 0; i < names.size(); ++i)
      if (!named.count(names[i]))
        throw Error(ErrorKind::usage, "--classes leaves out a class of the score columns", header_cell(reader, cols[i]),
                    names[i], "every class of the score columns, each once: " + joined(names));
  }
  for (std::size_t c : out.score_column) out.score_header.push_back(header[c]);

  auto not_a_score = [&](std::size_t c, std::string_view role) {
    for (std::size_t s : out.score_column)
      if (s == c)
        throw Error(ErrorKind::input, "the " + std::string(role) + " column is also a score column",
                    header_cell(reader, c), header[c], "a " + std::string(role) + " column apart from the scores");
  };
  if (!columns.label.empty()) {
    out.label_column = reader.column(columns.label, "label");
    not_a_score(*out.label_column, "label");
  }
  if (!columns.weight.empty()) {
    out.weight_column = reader.column(columns.weight, "weight");
    not_a_score(*out.weight_column, "weight");
  }
  if (!columns.segment.empty()) {
    out.segment_column = reader.column(columns.segment, columns.segment_role);
    not_a_score(*out.segment_column, columns.segment_role);
  }
  return out;
}

std::optional<ClassRowProblem> class_row_problem(const double* values, std::size_t k, ClassScale scale,
                                                 double sum_tolerance, std::string_view sum_advice,
                                                 std::string_view range_advice) {
  if (scale == ClassScale::logit) {
    for (std::size_t j = 0; j < k; ++j)
      if (!std::isfinite(values[j])) return ClassRowProblem{"the logit is not finite", "a finite decimal number", j};
    return std::nullopt;
  }
  double sum = 0.0;
  for (std::size_t j = 0; j < k; ++j) {
    if (!(values[j] >= 0.0 && values[j] <= 1.0))
      return ClassRowProblem{"the score lies outside [0, 1]",
                             "a probability in [0, 1] (" + std::string(range_advice) + ")", j};
    sum += values[j];
  }
  if (!(std::fabs(sum - 1.0) <= sum_tolerance))
    return ClassRowProblem{"the row's " + std::to_string(k) + " probabilities sum to " + significant_text(sum, 6),
                           "a sum within " + shortest_text(sum_tolerance) + " of 1 (" + std::string(sum_advice) + ")",
                           0};
  return std::nullopt;
}

ClassRows read_class_scores(const std::string& path, const ClassColumns& columns, char delimiter) {
  CsvOptions options;
  options.delimiter = delimiter;
  CsvReader reader(path, options);
  const ClassLayout layout = resolve_class_columns(reader, columns);
  const std::size_t k = layout.classes.size();

  ClassRows out;
  out.source = reader.name();
  out.score_columns = layout.score_header;
  out.data.classes = layout.classes;
  out.data.scale = columns.scale;
  if (layout.label_column) out.label_column = reader.header()[*layout.label_column];
  if (layout.weight_column) out.weight_column = reader.header()[*layout.weight_column];
  if (layout.segment_column) {
    out.segment_column = reader.header()[*layout.segment_column];
    out.segment_column_number = *layout.segment_column + 1;
  }
  std::unordered_map<std::string, std::uint32_t> segment_index;
  std::unordered_map<std::string_view, std::uint32_t> class_index;
  for (std::size_t i = 0; i < k; ++i) class_index.emplace(out.data.classes[i], static_cast<std::uint32_t>(i));

  const bool skip = columns.missing == MissingPolicy::skip;
  const std::string skip_hint = "or --missing skip to leave the row out";
  const std::string expected_label = "one of the classes " + joined(out.data.classes);
  std::vector<double> row(k);
  Record record;
  while (reader.next(record)) {
    if (skip) {
      bool missing = layout.label_column && is_missing_value(record.fields[*layout.label_column]);
      for (std::size_t j = 0; j < k && !missing; ++j) missing = is_missing_value(record.fields[layout.score_column[j]]);
      if (missing) {
        ++out.skipped;
        out.skipped_lines.push_back(record.line);
        continue;
      }
    }
    for (std::size_t j = 0; j < k; ++j) {
      const std::size_t c = layout.score_column[j];
      const std::string_view s = record.fields[c];
      const std::optional<double> v = parse_number(s);
      if (!v) {
        if (is_missing_value(s))
          throw Error(ErrorKind::input, "the score is missing", cell(reader, record, c), std::string(s),
                      "a score (" + skip_hint + ")");
        const std::string_view why = number_problem(s);
        const bool logit = columns.scale == ClassScale::logit;
        throw Error(ErrorKind::input, std::string(logit ? "the logit " : "the score ") + std::string(why),
                    cell(reader, record, c), std::string(s),
                    logit ? "a finite decimal number" : "a decimal number in [0, 1]");
      }
      row[j] = *v;
    }
    if (const std::optional<ClassRowProblem> p = class_row_problem(row.data(), k, columns.scale, columns.sum_tolerance)) {
      const std::size_t c = layout.score_column[p->column];
      throw Error(ErrorKind::input, p->message, cell(reader, record, c), std::string(record.fields[c]), p->expected);
    }
    if (layout.label_column) {
      const std::size_t c = *layout.label_column;
      const std::string_view l = record.fields[c];
      const auto it = class_index.find(l);
      if (it == class_index.end()) {
        if (is_missing_value(l))
          throw Error(ErrorKind::input, "the label is missing", cell(reader, record, c), std::string(l),
                      expected_label + " (" + skip_hint + ")");
        if (has_stray_space(l))
          throw Error(ErrorKind::input, "the label has spaces or tabs around it", cell(reader, record, c),
                      std::string(l), expected_label + ", written exactly");
        throw Error(ErrorKind::input, "the label is not one of the classes", cell(reader, record, c), std::string(l),
                    expected_label);
      }
      out.data.label.push_back(it->second);
    }
    if (layout.weight_column) {
      const std::size_t c = *layout.weight_column;
      const std::string_view t = record.fields[c];
      const std::optional<double> w = parse_number(t);
      if (!w)
        throw Error(ErrorKind::input, "the weight " + std::string(number_problem(t)), cell(reader, record, c),
                    std::string(t), "a finite number >= 0");
      if (*w < 0.0)
        throw Error(ErrorKind::input, "the weight is negative", cell(reader, record, c), std::string(t),
                    "a finite number >= 0");
      out.data.weight.push_back(*w);
    }
    if (layout.segment_column) {
      const std::size_t c = *layout.segment_column;
      const std::string_view v = record.fields[c];
      const auto [it, added] =
          segment_index.try_emplace(std::string(v), static_cast<std::uint32_t>(out.segment_names.size()));
      if (added) {
        if (out.segment_names.size() == columns.max_segment_values)
          throw Error(ErrorKind::input,
                      "the " + columns.segment_role + " column has more than " +
                          std::to_string(columns.max_segment_values) + " distinct values",
                      cell(reader, record, c), std::string(v), "a column of groups, not of ids");
        out.segment_names.emplace_back(v);
        out.segment_lines.push_back(record.line);
      }
      out.segment.push_back(it->second);
    }
    out.data.values.insert(out.data.values.end(), row.begin(), row.end());
    out.lines.push_back(record.line);
    ++out.data.rows;
  }
  if (out.data.rows == 0) {
    Location loc;
    loc.file = reader.name();
    if (out.skipped > 0)
      throw Error(ErrorKind::input,
                  "every row has a missing score or label (" + std::to_string(out.skipped) + " rows left out)", loc, {},
                  "at least one row with every score and a label");
    throw Error(ErrorKind::input, "the file has a header but no data rows", loc, {}, "at least one row");
  }
  out.source_sha256 = reader.content_sha256();
  return out;
}

}  // namespace plumb::io
