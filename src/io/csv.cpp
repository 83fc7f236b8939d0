#include "plumb/io/csv.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstring>
#include <set>

#if defined(__SSE2__)
#include <emmintrin.h>
#endif

#include "io/byte_source.hpp"
#include "io/csv_errors.hpp"
#include "plumb/error.hpp"

namespace plumb::io {
namespace {

constexpr std::size_t initial_buffer = std::size_t{1} << 20;

bool ends_with(const std::string& s, std::string_view suffix) {
  return s.size() >= suffix.size() && s.compare(s.size() - suffix.size(), suffix.size(), suffix) == 0;
}

std::string_view trim_blanks(std::string_view t) noexcept {
  while (!t.empty() && (t.front() == ' ' || t.front() == '\t')) t.remove_prefix(1);
  while (!t.empty() && (t.back() == ' ' || t.back() == '\t')) t.remove_suffix(1);
  return t;
}

// A column name as it can stand in a one-line message: control characters
// (a quoted name may hold a line break) as \xNN.
// The --sep spelling of a separator character.
std::string sep_option(char c) {
  if (c == ',') return "--sep comma";
  if (c == '\t') return "--sep tab";
  if (c == ';') return "--sep semicolon";
  return std::string("--sep '") + c + "'";
}

// The separators the header line holds outside double quotes, of comma,
// tab and semicolon, in that order.
std::string separators_in_header(std::string_view line) {
  bool quoted = false;
  bool seen[3] = {false, false, false};
  static constexpr char candidates[3] = {',', '\t', ';'};
  for (char c : line) {
    if (c == '"') quoted = !quoted;
    if (quoted) continue;
    for (int k = 0; k < 3; ++k) seen[k] = seen[k] || c == candidates[k];
  }
  std::string out;
  for (int k = 0; k < 3; ++k)
    if (seen[k]) out += candidates[k];
  return out;
}

std::string printable(std::string_view name) {
  static const char* hex = "0123456789abcdef";
  std::string out;
  for (unsigned char c : name) {
    if (c < 0x20 || c == 0x7f) {
      out += "\\x";
      out += hex[c >> 4];
      out += hex[c & 15];
    } else {
      out += static_cast<char>(c);
    }
  }
  return out;
}

// Exact powers of ten: every one up to 1e22 is a double (5^22 < 2^53).
constexpr double exact_powers_of_ten[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,  1e8,  1e9,  1e10, 1e11,
                                          1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

// A plain decimal ("0.123456", "-3", "12.5": digits, then optionally a point
// and digits) read exactly: when its digits as an integer m fit in 53 bits
// and it has at most 22 decimals, m and 10^k are both doubles and one
// correctly rounded division gives the correctly rounded value (Clinger,
// "How to read floating point numbers accurately", PLDI 1990), the double
// std::from_chars gives. False for anything else, left to from_chars.
bool read_plain_decimal(const char* p, const char* e, double& value) noexcept {
  const bool negative = p < e && *p == '-';
  if (negative) ++p;
  std::uint64_t m = 0;
  int digits = 0, decimals = 0;
  const char* const int_start = p;
  for (; p < e && static_cast<unsigned>(*p - '0') < 10; ++p, ++digits) m = m * 10 + static_cast<unsigned>(*p - '0');
  if (p == int_start) return false;
  if (p < e && *p == '.') {
    const char* const frac_start = ++p;
    for (; p < e && static_cast<unsigned>(*p - '0') < 10; ++p, ++digits)
      m = m * 10 + static_cast<unsigned>(*p - '0');
    decimals = static_cast<int>(p - frac_start);
    if (decimals == 0) return false;
  }
  if (p != e || digits > 19 || decimals > 22 || m > (std::uint64_t{1} << 53)) return false;
  const double v = static_cast<double>(m) / exact_powers_of_ten[decimals];
  value = negative ? -v : v;
  return true;
}

}  // namespace

Error ragged_row(const std::string& file, std::uint64_t line, std::size_t fields, std::size_t header_fields) {
  Location loc;
  loc.file = file;
  loc.line = line;
  return Error(ErrorKind::input,
               "row has " + std::to_string(fields) + " fields but the header has " + std::to_string(header_fields),
               loc, {}, "the same number of fields as the header");
}

Error nul_byte(const std::string& file, std::uint64_t line, std::size_t column) {
  Location loc;
  loc.file = file;
  loc.line = line;
  loc.column = column;
  return Error(ErrorKind::input, "the input holds a NUL byte", loc, {}, "text (is this a binary file?)");
}

std::optional<double> parse_number(std::string_view text) noexcept {
  // The common case first: a plain decimal with nothing around it.
  double fast = 0.0;
  if (read_plain_decimal(text.data(), text.data() + text.size(), fast)) return fast;
  text = trim_blanks(text);
  if (!text.empty() && text.front() == '+') {
    text.remove_prefix(1);
    // from_chars takes a '-' here, which would read "+-2" as -2.
    if (!text.empty() && text.front() == '-') return std::nullopt;
  }
  if (text.empty()) return std::nullopt;
  // from_chars would also take "nan", "inf" and "infinity": scores must be
  // decimal numbers, so the first character must start one.
  const char c0 = text.front() == '-' && text.size() > 1 ? text[1] : text.front();
  if (!(std::isdigit(static_cast<unsigned char>(c0)) || c0 == '.')) return std::nullopt;
  double v = 0.0;
  const auto [ptr, ec] = std::from_chars(text.data(), text.data() + text.size(), v, std::chars_format::general);
  if (ec != std::errc() || ptr != text.data() + text.size() || !std::isfinite(v)) return std::nullopt;
  return v;
}

std::string_view number_problem(std::string_view text) noexcept {
  std::string_view t = trim_blanks(text);
  if (t.empty()) return "is empty";
  if (!t.empty() && (t.front() == '+' || t.front() == '-')) t.remove_prefix(1);
  std::string lower;
  for (char c : t) lower += static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  if (lower == "nan") return "is not a number (NaN)";
  if (lower == "inf" || lower == "infinity") return "is not finite";
  double v = 0.0;
  const auto [ptr, ec] = std::from_chars(t.data(), t.data() + t.size(), v, std::chars_format::general);
  if (ec == std::errc::result_out_of_range) return "is out of the range of a double";
  return "is not a decimal number";
}

CsvReader::CsvReader(const std::string& path, const CsvOptions& options)
    : source_(std::make_unique<ByteSource>(path, ByteSourceOptions{options.keep_sha256, /*decompress=*/true})),
      options_(options) {
  name_ = source_->name();
  buffer_.resize(initial_buffer);
  Location loc;
  loc.file = name_;
  fill();
  // A pipe may deliver the header in pieces: read up to its first line end
  // (or the end of the input) before looking for a byte-order mark and the
  // separator.
  while (!eof_ && end_ - begin_ <= options_.max_record_bytes &&
         std::memchr(buffer_.data() + begin_, '\n', end_ - begin_) == nullptr)
    fill();
  if (end_ == begin_) throw Error(ErrorKind::input, "the file is empty", loc, {}, "a header row naming the columns");
  // A UTF-8 byte-order mark is not part of the first column's name.
  if (end_ - begin_ >= 3 && std::memcmp(buffer_.data() + begin_, "\xEF\xBB\xBF", 3) == 0) begin_ += 3;

  delimiter_ = options.delimiter;
  if (delimiter_ == 0) {
    if (ends_with(name_, ".tsv") || ends_with(name_, ".tab") || ends_with(name_, ".tsv.gz") ||
        ends_with(name_, ".tab.gz")) {
      delimiter_ = '\t';
    } else {
      // Look at the first line only: the one of comma, tab and semicolon it
      // holds outside quotes; none, a comma (one column); more than one is
      // ambiguous and refused rather than guessed.
      const char* b = buffer_.data() + begin_;
      const char* nl = static_cast<const char*>(std::memchr(b, '\n', end_ - begin_));
      const std::string_view first(b, nl ? static_cast<std::size_t>(nl - b) : end_ - begin_);
      const std::string found = separators_in_header(first);
      if (found.size() > 1) {
        std::string names, options;
        for (char c : found) {
          names += (names.empty() ? "" : " and ") + std::string(c == '\t' ? "tab" : std::string("'") + c + "'");
          options += (options.empty() ? "" : " or ") + sep_option(c);
        }
        Location at = loc;
        at.line = 1;
        throw Error(ErrorKind::input, "the header row holds both " + names + ", so the separator is ambiguous", at, {},
                    options + " to name it");
      }
      delimiter_ = found.empty() ? ',' : found[0];
    }
  }

  if (!read_record(header_record_))
    throw Error(ErrorKind::input, "the file is empty", loc, {}, "a header row naming the columns");
  if (header_record_.fields.empty()) {
    loc.line = 1;
    throw Error(ErrorKind::input, "the header row is empty", loc, {}, "a header row naming the columns");
  }
  header_storage_.assign(header_record_.raw);
  std::set<std::string> seen;
  std::size_t col = 0;
  for (std::string_view f : header_record_.fields) {
    ++col;
    Location at = loc;
    at.line = header_record_.line;
    at.column = col;
    if (trim_blanks(f).empty())
      throw Error(ErrorKind::input, "header column " + std::to_string(col) + " has no name", at, {},
                  "a name for every column");
    if (!seen.insert(std::string(f)).second)
      throw Error(ErrorKind::input, "the header names a column twice", at, std::string(f), "distinct column names");
    header_.emplace_back(f);
  }
  // The header record's views point into the buffer; keep a copy of the raw text.
  header_record_.raw = header_storage_;
  header_record_.fields.clear();
  header_record_.line_end = header_record_.line_end == "\r\n" ? "\r\n" : "\n";
}

CsvReader::~CsvReader() = default;

std::uint64_t CsvReader::bytes_read() const noexcept {
  if (source_->compressed()) return source_->bytes_read();
  return source_->bytes_read() - (end_ - begin_);
}
std::optional<std::uint64_t> CsvReader::total_bytes() const noexcept { return source_->total_bytes(); }
std::string CsvReader::content_sha256() const { return source_->sha256_hex(); }

std::size_t CsvReader::column(std::string_view spec, std::string_view role) const {
  for (std::size_t i = 0; i < header_.size(); ++i)
    if (header_[i] == spec) return i;
  std::size_t index = 0;
  const auto [ptr, ec] = std::from_chars(spec.data(), spec.data() + spec.size(), index);
  if (ec == std::errc() && ptr == spec.data() + spec.size() && index >= 1 && index <= header_.size())
    return index - 1;
  std::string names;
  for (const std::string& h : header_) {
    if (names.size() > 200) {
      names += ", ...";
      break;
    }
    names += (names.empty() ? "'" : ", '") + printable(h) + "'";
  }
  Location loc;
  loc.file = name_;
  loc.line = 1;
  std::string expected = "a column name or 1-based index among " + names;
  // One column whose name holds a separator: the file is likely split by another one.
  if (header_.size() == 1)
    for (char c : {';', ',', '\t', '|'})
      if (c != delimiter_ && header_[0].find(c) != std::string::npos) {
        expected += "; the header reads as one column holding " +
                    std::string(c == '\t' ? "tabs" : std::string("'") + c + "'") + ": name the separator with " +
                    sep_option(c);
        break;
      }
  throw Error(ErrorKind::input, "no " + std::string(role) + " column", loc, std::string(spec), expected);
}

bool CsvReader::fill() {
  if (eof_) return false;
  if (begin_ > 0) {
    std::memmove(buffer_.data(), buffer_.data() + begin_, end_ - begin_);
    end_ -= begin_;
    begin_ = 0;
  }
  if (end_ == buffer_.size()) {
    if (buffer_.size() >= options_.max_record_bytes + 2) return true;  // the caller reports the long record
    buffer_.resize(std::min(buffer_.size() * 2, options_.max_record_bytes + 2));
  }
  const std::size_t got = source_->read(buffer_.data() + end_, buffer_.size() - end_);
  if (got == 0) eof_ = true;
  end_ += got;
  return got > 0;
}

namespace {

// Line ends in [b, e).
std::uint64_t count_newlines(const char* b, const char* e) noexcept {
  std::uint64_t n = 0;
#if defined(__SSE2__)
  // Sixteen byte counters (each match subtracts -1), summed every 255 steps
  // before they can wrap.
  const __m128i nl = _mm_set1_epi8('\n'), zero = _mm_setzero_si128();
  while (e - b >= 16) {
    __m128i counts = zero;
    for (int step = 0; step < 255 && e - b >= 16; ++step, b += 16)
      counts = _mm_sub_epi8(counts, _mm_cmpeq_epi8(_mm_loadu_si128(reinterpret_cast<const __m128i*>(b)), nl));
    const __m128i sums = _mm_sad_epu8(counts, zero);
    n += static_cast<std::uint64_t>(_mm_cvtsi128_si64(sums)) +
         static_cast<std::uint64_t>(_mm_cvtsi128_si64(_mm_unpackhi_epi64(sums, sums)));
  }
#endif
  for (; b < e; ++b) n += *b == '\n' ? 1 : 0;
  return n;
}

}  // namespace

CsvReader::Bulk CsvReader::take_lines(std::string& out, std::size_t max_bytes, std::uint64_t& first_line) {
  // No line taken in bulk may be longer than a record may be.
  max_bytes = std::min(max_bytes, options_.max_record_bytes);
  while (!eof_ && end_ - begin_ < max_bytes) {
    const std::size_t before = end_ - begin_;
    fill();
    if (end_ - begin_ == before && !eof_) break;  // the buffer is at its limit
  }
  if (begin_ == end_) return eof_ ? Bulk::end : Bulk::quoted;
  const char* const b = buffer_.data() + begin_;
  const std::size_t span = std::min(end_ - begin_, max_bytes);
  const char* quote = static_cast<const char*>(std::memchr(b, '"', span));
  const std::size_t clean = quote ? static_cast<std::size_t>(quote - b) : span;
  const char* last_nl = static_cast<const char*>(::memrchr(b, '\n', clean));
  std::size_t take = 0;
  if (last_nl) {
    take = static_cast<std::size_t>(last_nl - b) + 1;
  } else if (!quote && eof_ && end_ - begin_ <= max_bytes) {
    take = end_ - begin_;  // the last line, without a line end
  } else {
    return Bulk::quoted;
  }
  out.append(b, take);
  first_line = line_;
  line_ += count_newlines(b, b + take);
  begin_ += take;
  return Bulk::lines;
}

bool CsvReader::quote_ahead(std::size_t bytes) const noexcept {
  return std::memchr(buffer_.data() + begin_, '"', std::min(bytes, end_ - begin_)) != nullptr;
}

bool CsvReader::next(Record& record) {
  for (;;) {
    if (!read_record(record)) return false;
    if (record.raw.empty()) {
      // A blank line is skipped, except in a one-column file, where it is
      // a record whose one value is empty (a missing value, not nothing).
      if (header_.size() != 1) continue;
      record.fields.assign(1, record.raw);
      return true;
    }
    if (record.fields.size() != header_.size())
      throw ragged_row(name_, record.line, record.fields.size(), header_.size());
    return true;
  }
}

bool CsvReader::read_record(Record& record) {
  for (;;) {
    const char* const base = buffer_.data();
    const char* const b = base + begin_;
    const char* const e = base + end_;
    if (b == e && eof_) return false;

    // Scan one record; on running out of bytes before its end (and not at
    // end of input), refill and scan it again from its start.
    spans_.clear();
    scratch_.clear();
    scratch_.reserve(static_cast<std::size_t>(e - b));
    std::uint64_t newlines = 0;
    const char* p = b;
    bool complete = false;
    const char* raw_end = nullptr;
    const char* next = nullptr;
    auto fail_at = [&](const std::string& message, std::string value, const std::string& expected) {
      Location loc;
      loc.file = name_;
      loc.line = line_ + newlines;
      loc.column = spans_.size() + 1;
      throw Error(ErrorKind::input, message, loc, std::move(value), expected);
    };
    for (;;) {
      // At the start of a field.
      if (p < e && *p == '"') {
        const std::size_t out_start = scratch_.size();
        const std::uint64_t newlines_before_quote = newlines;
        ++p;
        bool closed = false;
        while (p < e) {
          const char c = *p;
          if (c == '"') {
            if (p + 1 < e && p[1] == '"') {
              scratch_ += '"';
              p += 2;
              continue;
            }
            if (p + 1 == e && !eof_) break;  // cannot tell "" from " yet
            closed = true;
            ++p;
            break;
          }
          if (c == '\n') ++newlines;
          if (c == '\0') throw nul_byte(name_, line_ + newlines, spans_.size() + 1);
          scratch_ += c;
          ++p;
        }
        if (!closed) {
          if (eof_) {
            newlines = newlines_before_quote;  // report the line where the field opened
            fail_at("a quoted field is not closed before the end of the input", {}, "a closing quote");
          }
          break;  // need more bytes
        }
        spans_.push_back(Span{out_start, scratch_.size() - out_start, true});
        if (p < e && *p == delimiter_) {
          ++p;
          continue;
        }
        if (p < e && *p == '\r' && p + 1 < e && p[1] == '\n') {
          raw_end = p;
          next = p + 2;
          complete = true;
          break;
        }
        if (p < e && *p == '\n') {
          raw_end = p;
          next = p + 1;
          complete = true;
          break;
        }
        if (p == e) {
          // At the end of the input the record ends here; otherwise the byte
          // after the quote has not been read yet.
          if (eof_) {
            raw_end = next = p;
            complete = true;
          }
          break;
        }
        if (*p == '\r' && p + 1 == e && !eof_) break;
        fail_at("text follows the closing quote of a field", std::string(1, *p), "a delimiter or the end of the line");
      }
      // Unquoted field: up to the delimiter or the line end.
      const char* f = p;
      while (p < e && *p != delimiter_ && *p != '\n') {
        if (*p == '\0') throw nul_byte(name_, line_ + newlines, spans_.size() + 1);
        ++p;
      }
      if (p == e && !eof_) break;
      const char* fe = p;
      if (p < e && *p == '\n' && fe > f && fe[-1] == '\r') --fe;  // CRLF
      else if (p == e && fe > f && fe[-1] == '\r') --fe;
      spans_.push_back(Span{static_cast<std::size_t>(f - b), static_cast<std::size_t>(fe - f), false});
      if (p < e && *p == delimiter_) {
        ++p;
        continue;
      }
      raw_end = fe;
      next = p < e ? p + 1 : p;
      complete = true;
      break;
    }

    // The limit counts the record's bytes with its line end. A complete
    // record is held to it too: otherwise whether a long record is refused
    // would depend on how many bytes one read happened to return.
    const std::size_t seen = static_cast<std::size_t>((complete ? next : e) - b);
    if (seen > options_.max_record_bytes) {
      const std::size_t limit = options_.max_record_bytes;
      Location loc;
      loc.file = name_;
      loc.line = line_;
      throw Error(ErrorKind::input,
                  "a record is longer than " +
                      (limit % (std::size_t{1} << 20) == 0 ? std::to_string(limit >> 20) + " MiB"
                                                          : std::to_string(limit) + " bytes"),
                  loc, {}, "shorter lines (is the file truncated or missing line ends?)");
    }
    if (!complete) {
      fill();
      continue;
    }

    record.raw = std::string_view(b, static_cast<std::size_t>(raw_end - b));
    record.line_end = std::string_view(raw_end, static_cast<std::size_t>(next - raw_end));
    record.line = line_;
    record.fields.clear();
    // A blank line is one empty unquoted field; report it as no fields.
    if (!(spans_.size() == 1 && !spans_[0].in_scratch && spans_[0].length == 0)) {
      for (const Span& s : spans_)
        record.fields.emplace_back(s.in_scratch ? scratch_.data() + s.offset : b + s.offset, s.length);
    }
    line_ += newlines + (record.line_end.empty() ? 0 : 1);
    begin_ = static_cast<std::size_t>(next - base);
    return true;
  }
}

}  // namespace plumb::io
