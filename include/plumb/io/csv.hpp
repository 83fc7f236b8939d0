#pragma once
// Streaming CSV/TSV reading (RFC 4180 quoting) with exact error locations.
//
// Records are read one at a time from a file or standard input through a
// fixed buffer, so memory stays flat whatever the input size. Each record
// gives both its raw bytes (for passing columns through unchanged) and its
// unescaped fields. Gzip input (recognised by its first bytes, whatever the
// name) is decompressed as it is read.
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace plumb::io {

class ByteSource;

struct Record {
  std::string_view raw;        // the record's bytes, without its line end
  // "\n", "\r\n" or "" (last record without one); "\r" for a last record
  // cut off after the CR of a CRLF, as a file truncated there ends.
  std::string_view line_end;
  std::vector<std::string_view> fields;  // unescaped field values
  std::uint64_t line = 0;      // physical line on which the record starts
};

struct CsvOptions {
  // 0: detect: tab for *.tsv / *.tab files; otherwise the one of comma, tab
  // and semicolon that the header line holds outside quotes (none: comma, a
  // file of one column). A header holding more than one of them is refused
  // as ambiguous (Error(input) at line 1) rather than guessed.
  char delimiter = 0;
  // Longest record accepted; a longer one is an input error, not an
  // unbounded allocation.
  std::size_t max_record_bytes = std::size_t{64} << 20;
  // Keep the SHA-256 of the input for content_sha256() (a cost per byte;
  // readers that never ask can turn it off).
  bool keep_sha256 = true;
};

class CsvReader {
 public:
  // path "-" (or empty) reads standard input. Reads and checks the header row
  // (at least one column, no empty or duplicated names, UTF-8 byte-order mark
  // dropped). Throws plumb::Error: io when the file cannot be opened or
  // read, input when it is empty or its header is malformed.
  explicit CsvReader(const std::string& path, const CsvOptions& options = {});
  ~CsvReader();
  CsvReader(const CsvReader&) = delete;
  CsvReader& operator=(const CsvReader&) = delete;

  // The name used in messages: the path, or "<stdin>".
  const std::string& name() const noexcept { return name_; }
  char delimiter() const noexcept { return delimiter_; }
  const std::vector<std::string>& header() const noexcept { return header_; }
  // The header record as it was read (raw bytes, line end).
  const Record& header_record() const noexcept { return header_record_; }

  // Resolve a column given by name or by 1-based index ("3"); names win over
  // indexes when a column is literally named "3". Throws plumb::Error(input)
  // naming the available columns, and suggesting --sep when the header is one
  // column whose name holds ';', ',', a tab or '|'. `role` ("score", "label") goes in the message.
  std::size_t column(std::string_view spec, std::string_view role) const;

  // Next data record, with exactly header().size() fields; false at the end.
  // Blank lines are skipped, except when the header has one column: there
  // a blank line is a record with one empty field. The record's views stay valid until the next
  // call. Throws plumb::Error(input) on a ragged row, an unclosed quote,
  // stray text after a closing quote, a NUL byte or an over-long record.
  bool next(Record& record);

  // Bulk reading for streaming passes that check fields themselves: hands
  // over, appended to `out`, the unread bytes up to the last line end among
  // the next `max_bytes` (or up to the end of the input), when those lines
  // hold no quote character, and sets `first_line` to the physical line they
  // start on. Blank lines (records when the header has one column), field counts and NUL bytes in them are not
  // checked: that is the caller's job. Bulk and next() may alternate.
  enum class Bulk { lines, quoted, end };
  // lines: bytes were appended. quoted: the next line holds a quote (or is
  // longer than max_bytes); read it with next(). end: no more input.
  Bulk take_lines(std::string& out, std::size_t max_bytes, std::uint64_t& first_line);
  // Whether a quote character lies among the next `bytes` unread bytes (of
  // those already buffered): when not, take_lines() will take them in bulk.
  bool quote_ahead(std::size_t bytes) const noexcept;

  // Bytes consumed so far, and the total size when the input is a regular
  // file (for gzip input, both count the compressed bytes, and bytes_read()
  // runs ahead of the records by what is buffered).
  std::uint64_t bytes_read() const noexcept;
  std::optional<std::uint64_t> total_bytes() const noexcept;

  // SHA-256 of every byte read so far (as stored: compressed bytes for gzip
  // input), as lowercase hex; call after the last record for the whole input.
  std::string content_sha256() const;

 private:
  bool read_record(Record& record);
  bool fill();

  std::unique_ptr<ByteSource> source_;
  std::string name_;
  CsvOptions options_;
  char delimiter_ = ',';
  std::vector<std::string> header_;
  Record header_record_;
  std::string header_storage_;
  std::vector<char> buffer_;
  std::size_t begin_ = 0, end_ = 0;
  bool eof_ = false;
  std::uint64_t line_ = 1;
  std::string scratch_;
  struct Span {
    std::size_t offset, length;
    bool in_scratch;
  };
  std::vector<Span> spans_;
};

// Parse a decimal number (optional sign, digits, fraction, exponent; no hex,
// no "nan"/"inf"), ignoring surrounding spaces and tabs. nullopt when the text
// is not such a number or is out of double range.
// The result is the correctly rounded double, as std::from_chars gives; plain
// decimals of up to 19 digits take an exact fast path.
std::optional<double> parse_number(std::string_view text) noexcept;

// Why parse_number refused `text`, in a few words ("is empty", "is not a
// number", "is not finite", "is out of the range of a double").
std::string_view number_problem(std::string_view text) noexcept;

}  // namespace plumb::io
