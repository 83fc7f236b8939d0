#include "plumb/io/score_cells.hpp"

#include <cmath>
#include <cstring>
#include <string_view>

#include "io/csv_errors.hpp"
#include "plumb/error.hpp"
#include "plumb/io/apply_stream.hpp"
#include "plumb/io/csv.hpp"

namespace plumb::io {

namespace {

// Counts one row's score; the location of a refusal is the caller's.
struct Counter {
  const ScoreCellsOptions& o;
  GridCounter grid;
  ScoreCells& out;

  // nullptr when counted, else why not (a refusal to be located).
  bool valid(double s) const noexcept {
    if (!std::isfinite(s)) return false;
    return o.scale != Scale::probability || (s >= 0.0 && s <= 1.0);
  }
  void count(double s, bool positive) {
    if (s < o.range_min || s > o.range_max) ++out.outside;
    grid.add(s, positive);
    ++out.rows;
  }
};

[[noreturn]] void refuse_score(const CsvReader& reader, std::uint64_t line, std::size_t column,
                               std::string_view text, const ScoreCellsOptions& o) {
  Location loc;
  loc.file = reader.name();
  loc.line = line;
  loc.column = column + 1;
  loc.column_name = reader.header()[column];
  if (is_missing_value(text))
    throw Error(ErrorKind::input, "the score is missing", loc, std::string(text),
                "a score (or --missing skip to leave the row out)");
  const ScoreProblem why = score_problem(text, o.scale, o.other_scales_hint);
  throw Error(ErrorKind::input, why.message, loc, std::string(text), why.expected);
}

// Re-raises a grid overflow at the row that caused it.
template <class F>
void located(const CsvReader& reader, std::uint64_t line, std::size_t column, F&& f) {
  try {
    f();
  } catch (const Error& e) {
    if (!e.where().file.empty()) throw;
    Location loc;
    loc.file = reader.name();
    loc.line = line;
    loc.column = column + 1;
    loc.column_name = reader.header()[column];
    throw Error(e.kind(), e.message(), loc, e.value(), e.expected());
  }
}

void read_unlabelled(const std::string& path, const ScoreCellsOptions& o, ScoreCells& out) {
  CsvOptions csv;
  csv.delimiter = o.delimiter;
  CsvReader reader(path, csv);
  const std::size_t column = reader.column(o.score, "score");
  const std::size_t fields = reader.header().size();
  const char delim = reader.delimiter();
  out.source = reader.name();
  out.score_column = reader.header()[column];
  Counter counter{o, GridCounter(o.scale, o.step, false), out};

  auto one = [&](std::string_view text, std::uint64_t line) {
    if (o.missing == MissingPolicy::skip && is_missing_value(text)) {
      ++out.skipped;
      return;
    }
    const std::optional<double> s = parse_number(text);
    if (!s || !counter.valid(*s)) refuse_score(reader, line, column, text, o);
    located(reader, line, column, [&] { counter.count(*s, false); });
  };

  std::string block;
  Record record;
  for (;;) {
    block.clear();
    std::uint64_t line = 0;
    const CsvReader::Bulk got = reader.take_lines(block, std::size_t{1} << 20, line);
    if (got == CsvReader::Bulk::end) break;
    if (got == CsvReader::Bulk::quoted) {
      if (!reader.next(record)) break;
      one(record.fields[column], record.line);
      continue;
    }
    // One pass over the block's bytes: delimiters, line ends and NUL bytes.
    const char* p = block.data();
    const char* end = p + block.size();
    while (p < end) {
      const char* start = p;
      std::size_t seen = 0;
      const char* score_begin = nullptr;
      const char* score_end = nullptr;
      const char* field = p;
      bool nul = false;
      for (; p < end && *p != '\n'; ++p) {
        const char c = *p;
        if (c == delim) {
          if (seen == column) score_begin = field, score_end = p;
          ++seen;
          field = p + 1;
        } else if (c == '\0') {
          nul = true;
        }
      }
      const char* line_end = p;
      if (p < end) ++p;  // past the '\n'
      if (line_end > start && line_end[-1] == '\r') --line_end;
      if (line_end == start && fields > 1) {  // a blank line: not a record
        ++line;
        continue;
      }
      const char* last_end = line_end;
      if (seen == column) score_begin = field, score_end = last_end;
      ++seen;
      if (seen != fields) throw ragged_row(reader.name(), line, seen, fields);
      if (nul) {
        const char* at = static_cast<const char*>(std::memchr(start, '\0', static_cast<std::size_t>(line_end - start)));
        std::size_t col = 1;
        for (const char* c = start; c < at; ++c) col += *c == delim;
        throw nul_byte(reader.name(), line, col);
      }
      // A CR before the line end belongs to the last field only.
      one(std::string_view(score_begin, static_cast<std::size_t>(score_end - score_begin)), line);
      ++line;
    }
  }
  out.sha256 = reader.content_sha256();
  out.cells = counter.grid.finish();
}

void read_labelled_cells(const std::string& path, const ScoreCellsOptions& o, ScoreCells& out) {
  LabelledColumns columns{{{o.score, o.scale}}, o.label, {}, {}};
  columns.missing = o.missing;
  columns.other_scales_hint = o.other_scales_hint;
  GridCounter grid(o.scale, o.step, true);
  std::uint64_t outside = 0;
  const LabelledRows rows = read_labelled(path, columns, o.rule, o.delimiter, {},
                                          [&](std::span<const double> score, std::span<const double> label) {
                                            for (std::size_t i = 0; i < score.size(); ++i) {
                                              const double s = score[i];
                                              if (s < o.range_min || s > o.range_max) ++outside;
                                              grid.add(s, label[i] > 0.5);
                                            }
                                          });
  out.source = rows.source;
  out.sha256 = rows.source_sha256;
  out.score_column = rows.score_columns[0];
  out.label_column = rows.label_column;
  out.rows = rows.rows;
  out.skipped = rows.skipped;
  out.outside = outside;
  out.cells = grid.finish();
}

}  // namespace

ScoreCells read_score_cells(const std::string& path, const ScoreCellsOptions& o) {
  ScoreCells out;
  if (o.label.empty()) read_unlabelled(path, o, out);
  else read_labelled_cells(path, o, out);
  return out;
}

}  // namespace plumb::io
