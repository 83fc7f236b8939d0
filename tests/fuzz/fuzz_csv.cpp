// Fuzz target for the CSV/TSV reader (plumb/io/csv.hpp) and io::parse_number.
//
// Input layout: byte 0 chooses the options (bits 0-1: separator detected,
// comma, tab, or byte 2; bit 2: a small max_record_bytes of
// 8 + 16 * (byte 0 >> 3)), byte 1 seeds the sizes of the pieces in which a
// pipe delivers the text, byte 2 is the explicit separator; the rest is the
// text.
//
// Invariants beyond "no crash":
//  - only plumb::Error escapes;
//  - the text read from a file and from a pipe that delivers it in pieces
//    gives the same header, records and error (when the error is an
//    over-long record or corrupt gzip data, or the first line is over the
//    limit, both refuse the text, and the records both read agree);
//  - every record has header().size() fields, equal to an independent
//    reading of its raw bytes by RFC 4180 (so a record without quotes is
//    its fields joined by the separator);
//  - records are consecutive slices of the text, with only blank lines
//    between them (none in a one-column file, where a blank line is a
//    record of one empty field), and record.line is 1 + the line breaks before it
//    (strictly increasing);
//  - parse_number of every field (and of the text's first bytes) returns
//    only finite values, the same as from_chars and strtod of the trimmed
//    text, and accepts every decimal number that strtod reads in range.
#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdlib>
#include <cstring>
#include <optional>
#include <string>
#include <vector>

#include "fuzz_support.hpp"
#include "plumb/io/csv.hpp"

namespace {

using plumb::fuzz::shown;

// RFC 4180 reading of one record's raw bytes (line end excluded), as the
// reader documents it: a field that starts with a quote runs to the closing
// quote ("" is one quote) and must be followed by the separator or the end;
// any other field runs to the next separator. nullopt when malformed.
std::optional<std::vector<std::string>> reference_fields(std::string_view raw, char sep) {
  std::vector<std::string> fields;
  std::size_t i = 0;
  const std::size_t n = raw.size();
  for (;;) {
    if (i < n && raw[i] == '"') {
      ++i;
      std::string f;
      for (;;) {
        if (i >= n) return std::nullopt;
        if (raw[i] == '"') {
          if (i + 1 < n && raw[i + 1] == '"') {
            f += '"';
            i += 2;
            continue;
          }
          ++i;
          break;
        }
        f += raw[i++];
      }
      fields.push_back(std::move(f));
      if (i == n) return fields;
      if (raw[i] != sep) return std::nullopt;
      ++i;
    } else {
      const std::size_t j = raw.find(sep, i);
      if (j == std::string_view::npos) {
        fields.emplace_back(raw.substr(i));
        return fields;
      }
      fields.emplace_back(raw.substr(i, j - i));
      i = j + 1;
    }
  }
}

std::string joined(const std::vector<std::string_view>& fields, char sep) {
  std::string out;
  for (std::size_t i = 0; i < fields.size(); ++i) {
    if (i) out += sep;
    out += fields[i];
  }
  return out;
}

// The grammar parse_number documents: optional sign, digits with an
// optional fraction (or a fraction alone), optional exponent.
bool is_decimal(std::string_view t) {
  std::size_t i = 0;
  if (i < t.size() && (t[i] == '+' || t[i] == '-')) ++i;
  std::size_t digits = 0;
  while (i < t.size() && t[i] >= '0' && t[i] <= '9') ++i, ++digits;
  if (i < t.size() && t[i] == '.') {
    ++i;
    while (i < t.size() && t[i] >= '0' && t[i] <= '9') ++i, ++digits;
  }
  if (digits == 0) return false;
  if (i < t.size() && (t[i] == 'e' || t[i] == 'E')) {
    ++i;
    if (i < t.size() && (t[i] == '+' || t[i] == '-')) ++i;
    std::size_t exp_digits = 0;
    while (i < t.size() && t[i] >= '0' && t[i] <= '9') ++i, ++exp_digits;
    if (exp_digits == 0) return false;
  }
  return i == t.size();
}

void check_parse_number(std::string_view text) {
  const std::optional<double> v = plumb::io::parse_number(text);
  std::string_view t = text;
  while (!t.empty() && (t.front() == ' ' || t.front() == '\t')) t.remove_prefix(1);
  while (!t.empty() && (t.back() == ' ' || t.back() == '\t')) t.remove_suffix(1);
  const bool decimal = is_decimal(t);
  // strtod (glibc, correctly rounded) as a second route; it needs a NUL.
  const std::string owned(t);
  errno = 0;
  char* end = nullptr;
  const double by_strtod = std::strtod(owned.c_str(), &end);
  const bool strtod_whole = !owned.empty() && end == owned.c_str() + owned.size();
  const bool strtod_in_range = errno == 0 && std::isfinite(by_strtod);
  if (v) {
    FUZZ_CHECK(std::isfinite(*v), "parse_number(" + shown(text) + ") is not finite");
    FUZZ_CHECK(decimal, "parse_number accepted " + shown(text) + ", which is not a decimal number");
    std::string_view u = t;
    if (!u.empty() && u.front() == '+') u.remove_prefix(1);
    double by_from_chars = 0.0;
    const auto [ptr, ec] = std::from_chars(u.data(), u.data() + u.size(), by_from_chars);
    FUZZ_CHECK(ec == std::errc() && ptr == u.data() + u.size() && by_from_chars == *v &&
                   std::signbit(by_from_chars) == std::signbit(*v),
               "from_chars disagrees with parse_number on " + shown(text));
    FUZZ_CHECK(strtod_whole && by_strtod == *v, "strtod disagrees with parse_number on " + shown(text));
  } else {
    FUZZ_CHECK(!plumb::io::number_problem(text).empty(), "no reason given for refusing " + shown(text));
    // A decimal number that strtod reads without overflow or underflow must
    // be accepted.
    FUZZ_CHECK(!(decimal && strtod_whole && strtod_in_range),
               "parse_number refused the decimal number " + shown(text));
  }
}

struct RecordSeen {
  std::string raw, line_end;
  std::vector<std::string> fields;
  std::uint64_t line;
};

struct Transcript {
  char delimiter = 0;
  std::vector<std::string> header;
  std::vector<RecordSeen> records;
  bool failed = false;
  plumb::Error error{plumb::ErrorKind::internal, ""};
  std::string sha256;

  // `long_first_line`: the first line is longer than the record limit, so
  // the separator may be detected from the part of it that has arrived
  // (the reader stops looking for its end there); the text is refused
  // either way, but the fault it names may differ.
  bool same_as(const Transcript& o, bool long_first_line) const {
    if (failed != o.failed) return false;
    // Which of two faults a reader meets first may depend on the pieces
    // when one of them is an over-long record (found as soon as more than
    // the limit has arrived, a fault further on only once it is read) or
    // corrupt gzip data (found when zlib reaches it, which may be before
    // or after the CSV reader sees the text decompressed so far). Then
    // both must refuse the input, and agree on what both read before.
    const auto order_free = [](const plumb::Error& e) {
      return e.message().starts_with("a record is longer than") || e.message().find("gzip") != std::string::npos;
    };
    const bool either_fault = failed && (long_first_line || order_free(error) || order_free(o.error));
    const bool both_have_header = !header.empty() && !o.header.empty();  // empty: the header was refused
    if ((!either_fault || both_have_header) && (delimiter != o.delimiter || header != o.header)) return false;
    if (!either_fault && records.size() != o.records.size()) return false;
    for (std::size_t i = 0; i < std::min(records.size(), o.records.size()); ++i) {
      const RecordSeen &a = records[i], &b = o.records[i];
      if (a.raw != b.raw || a.line_end != b.line_end || a.fields != b.fields || a.line != b.line) return false;
    }
    if (either_fault) return error.kind() == o.error.kind();
    if (failed)
      return error.kind() == o.error.kind() && error.message() == o.error.message() &&
             error.where().line == o.error.where().line && error.where().column == o.error.where().column &&
             error.value() == o.error.value() && error.expected() == o.error.expected();
    return sha256 == o.sha256;
  }
};

std::uint64_t newlines_in(std::string_view s) {
  std::uint64_t n = 0;
  for (char c : s) n += c == '\n';
  return n;
}

// Reads `text` through `path`, checking every record, into a transcript.
Transcript read_all(const std::string& path, std::string_view text, const plumb::io::CsvOptions& options) {
  Transcript t;
  const bool gzip = text.size() >= 2 && text[0] == '\x1f' && text[1] == '\x8b';
  t.failed = !plumb::fuzz::only_plumb_errors(
      [&] {
        plumb::io::CsvReader reader(path, options);
        t.delimiter = reader.delimiter();
        t.header = reader.header();
        const char sep = reader.delimiter();
        FUZZ_CHECK(!t.header.empty(), "an empty header was accepted");
        FUZZ_CHECK(reader.header_record().line == 1, "the header does not start on line 1");
        const auto header_ref = reference_fields(reader.header_record().raw, sep);
        FUZZ_CHECK(header_ref && *header_ref == t.header,
                   "header names differ from an RFC 4180 reading of " + shown(reader.header_record().raw));
        for (const std::string& name : t.header) check_parse_number(name);

        std::uint64_t consumed_before = reader.bytes_read();
        std::uint64_t previous_line = 1;
        plumb::io::Record record;
        while (reader.next(record)) {
          FUZZ_CHECK(record.fields.size() == t.header.size(),
                     "a record has " + std::to_string(record.fields.size()) + " fields, the header " +
                         std::to_string(t.header.size()));
          FUZZ_CHECK(!record.raw.empty() || t.header.size() == 1,
                     "a blank line was returned as a record of a file with more than one column");
          FUZZ_CHECK(record.line > previous_line, "line numbers do not increase at line " + std::to_string(record.line));
          previous_line = record.line;
          FUZZ_CHECK(record.line_end == "\n" || record.line_end == "\r\n" || record.line_end.empty() ||
                         (record.line_end == "\r" && (gzip || reader.bytes_read() == text.size())),
                     "a record ends with " + shown(record.line_end) + ", not \\n, \\r\\n, nothing or a last \\r");

          for (std::string_view f : record.fields) check_parse_number(f);
          const auto ref = reference_fields(record.raw, sep);
          std::vector<std::string> fields(record.fields.begin(), record.fields.end());
          FUZZ_CHECK(ref && *ref == fields, "fields differ from an RFC 4180 reading of " + shown(record.raw));
          if (record.raw.find('"') == std::string_view::npos)
            FUZZ_CHECK(joined(record.fields, sep) == record.raw,
                       "an unquoted record is not its fields joined: " + shown(record.raw));
          t.records.push_back(RecordSeen{std::string(record.raw), std::string(record.line_end), std::move(fields),
                                         record.line});
          // Gzip input is read decompressed: bytes_read() counts the
          // compressed bytes, so the record's place cannot be checked.
          if (gzip) continue;

          // Where the record lies in the text.
          const std::uint64_t consumed = reader.bytes_read();
          const std::size_t length = record.raw.size() + record.line_end.size();
          FUZZ_CHECK(consumed <= text.size() && consumed >= consumed_before + length,
                     "bytes_read() is not past the record");
          const std::size_t start = static_cast<std::size_t>(consumed - length);
          FUZZ_CHECK(text.substr(start, record.raw.size()) == record.raw &&
                         text.substr(start + record.raw.size(), record.line_end.size()) == record.line_end,
                     "the record " + shown(record.raw) + " is not the text's bytes at its place");
          const std::string_view gap =
              text.substr(static_cast<std::size_t>(consumed_before), start - static_cast<std::size_t>(consumed_before));
          for (std::size_t i = 0; i < gap.size(); ++i)
            FUZZ_CHECK(gap[i] == '\n' || (gap[i] == '\r' && i + 1 < gap.size() && gap[i + 1] == '\n'),
                       "bytes other than blank lines were skipped: " + shown(gap));
          FUZZ_CHECK(gap.empty() || t.header.size() != 1, "a blank line of a one-column file was skipped");
          FUZZ_CHECK(record.line == 1 + newlines_in(text.substr(0, start)),
                     "record " + shown(record.raw) + " is said to start on line " + std::to_string(record.line));
          consumed_before = consumed;
        }
        FUZZ_CHECK(gzip || reader.bytes_read() == text.size(),
                   "the reader stopped at byte " + std::to_string(reader.bytes_read()) + " of " +
                       std::to_string(text.size()) + " after " + std::to_string(t.records.size()) +
                       " records (header " + shown(reader.header_record().raw) + ")");
        FUZZ_CHECK(!reader.next(record), "a record after the end");
        t.sha256 = reader.content_sha256();
      },
      &t.error);
  return t;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size < 3) return 0;
  const std::uint8_t flags = data[0], chunk_seed = data[1], separator = data[2];
  const std::string_view text(reinterpret_cast<const char*>(data) + 3, size - 3);

  check_parse_number(text.substr(0, 48));

  plumb::io::CsvOptions options;
  switch (flags & 3) {
    case 0: options.delimiter = 0; break;
    case 1: options.delimiter = ','; break;
    case 2: options.delimiter = '\t'; break;
    default:
      // What plumb's --sep accepts: one character other than a quote or a line end.
      options.delimiter = (separator == '"' || separator == '\n' || separator == '\r' || separator == 0)
                              ? ';'
                              : static_cast<char>(separator);
  }
  if (flags & 4) options.max_record_bytes = 8 + 16 * static_cast<std::size_t>(flags >> 3u);

  const plumb::fuzz::MemoryFile file(text);
  const Transcript whole = read_all(file.path(), text, options);
  // Up to 256 KiB, so that every read asks for more than a packet (see chunk_plan).
  const plumb::fuzz::ChunkedPipe pipe(text, plumb::fuzz::chunk_plan(chunk_seed, text.size()));
  if (text.size() <= (std::size_t{256} << 10) && pipe.ok()) {
    const Transcript pieces = read_all(pipe.path(), text, options);
    std::string_view first_line = text;
    if (first_line.starts_with("\xEF\xBB\xBF")) first_line.remove_prefix(3);
    first_line = first_line.substr(0, first_line.find('\n'));
    FUZZ_CHECK(whole.same_as(pieces, first_line.size() + 1 > options.max_record_bytes),
               "reading from a file and from a pipe in pieces differ (" +
                   (whole.failed ? plumb::format_error(whole.error) : std::string("file read fine")) + " / " +
                   (pieces.failed ? plumb::format_error(pieces.error) : std::string("pipe read fine")) + ")");
  }
  return 0;
}
