#include "plumb/io/tally_io.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <iterator>
#include <vector>

#include "core/json_fields.hpp"
#include "io/byte_source.hpp"
#include "io/json_input.hpp"
#include "plumb/error.hpp"
#include "plumb/io/output.hpp"
#include "plumb/version.hpp"

namespace plumb {

namespace jf = json_fields;
using nlohmann::json;

namespace {


Location at_file(const std::string& where) {
  Location loc;
  loc.file = where;
  return loc;
}

std::string string_or_null(const json& doc, const char* key, const std::string& where) {
  const json& v = jf::require(doc, key, where, key);
  if (!v.is_string() && !v.is_null()) jf::fail(where, key, "is neither a string nor null", "a column name, or null");
  return v.is_string() ? v.get<std::string>() : std::string();
}

// The bytes of a tally as the JSON parser takes them, one at a time,
// refilled chunk by chunk from a ByteSource (or all from one string), so
// that no copy of the whole document is kept. Remembers where the last
// lines began, which is all a parser's error offset needs to be turned into
// a line and column (the parser is at most one byte ahead of or behind its
// offset).
class TallyBytes {
 public:
  explicit TallyBytes(io::ByteSource& source) : source_(&source), buffer_(1 << 16) {}
  explicit TallyBytes(const std::string& text) : data_(text.data()), size_(text.size()) {}
  TallyBytes(const TallyBytes&) = delete;
  TallyBytes& operator=(const TallyBytes&) = delete;

  bool at_end() { return pos_ == size_ && !refill(); }
  char peek() const noexcept { return data_[pos_]; }
  void advance() noexcept {
    const char c = data_[pos_++];
    ++consumed_;
    if (c == '\n') {
      ++line_;
      line_start_[2] = line_start_[1];
      line_start_[1] = line_start_[0];
      line_start_[0] = consumed_;
    }
  }
  // The line and column of the byte before `byte` (a parser's offset,
  // counting from 1), as io::locate_byte gives them on the whole text.
  // Exact when `byte` lies within two bytes of those taken so far.
  void locate(std::uint64_t byte, Location& loc) const noexcept {
    const std::uint64_t stop = byte > 0 ? std::min(byte - 1, consumed_) : 0;
    std::size_t k = 0;
    std::uint64_t line = line_;
    while (k < 2 && line_start_[k] > stop) {
      ++k;
      --line;
    }
    loc.line = line;
    loc.column = stop >= line_start_[k] ? stop - line_start_[k] + 1 : 1;
  }
  // Reads to the end; the number of bytes in all.
  std::uint64_t drain() {
    consumed_ += size_ - pos_;
    pos_ = size_;
    while (refill()) {
      consumed_ += size_;
      pos_ = size_;
    }
    return consumed_;
  }

 private:
  bool refill() {
    if (!source_) return false;
    size_ = source_->read(buffer_.data(), buffer_.size());
    data_ = buffer_.data();
    pos_ = 0;
    return size_ > 0;
  }

  io::ByteSource* source_ = nullptr;
  std::vector<char> buffer_;
  const char* data_ = nullptr;
  std::size_t size_ = 0, pos_ = 0;
  std::uint64_t consumed_ = 0, line_ = 1;
  std::uint64_t line_start_[3] = {0, 0, 0};  // bytes before the last three line starts
};

// An input iterator over TallyBytes for json::sax_parse; a null one is the end.
struct ByteIterator {
  using iterator_category = std::input_iterator_tag;
  using value_type = char;
  using difference_type = std::ptrdiff_t;
  using pointer = const char*;
  using reference = char;

  TallyBytes* bytes;
  char operator*() const noexcept { return bytes->peek(); }
  ByteIterator& operator++() noexcept {
    bytes->advance();
    return *this;
  }
  ByteIterator operator++(int) noexcept {
    ByteIterator before = *this;
    bytes->advance();
    return before;
  }
  bool ended() const { return bytes == nullptr || bytes->at_end(); }
  bool operator==(const ByteIterator& other) const { return ended() == other.ended(); }
  bool operator!=(const ByteIterator& other) const { return !(*this == other); }
};

// The per-score arrays, which the reader keeps as numbers while they stream
// past instead of as a JSON tree.
enum Column : std::size_t { column_score, column_count, column_negative, column_positive, column_weight_sq, columns };
constexpr const char* column_names[columns] = {"score", "count", "negative", "positive", "weight_sq"};

struct StreamedColumn {
  bool present = false;                // the document's (last) field of this name is an array
  std::vector<double> numbers;         // its elements, unless count
  std::vector<std::uint64_t> counts;   // count's elements
  std::size_t elements = 0;
  // The first element the checks refuse: its index and why (what
  // json_fields and the count check say of it).
  bool refused = false;
  std::size_t refused_at = 0;
  std::string refusal, expected;

  void clear() { *this = StreamedColumn{}; }
  void refuse(const std::string& why, const std::string& expect) {
    if (refused) return;
    refused = true;
    refused_at = elements;
    refusal = why;
    expected = expect;
    numbers = {};
    counts = {};
  }
};

struct ParsedTally {
  json doc;  // every field but the per-score arrays
  StreamedColumn column[columns];
};

// nlohmann's SAX interface: builds the small fields as a JSON tree and
// streams the top-level per-score arrays into ParsedTally's columns,
// noting (not throwing) their first bad element, so that the checks can
// run in their usual order afterwards. Refuses nesting deeper than
// io::max_json_nesting as it is reached. Duplicate fields: the last wins,
// as in a JSON tree.
class TallyHandler {
 public:
  TallyHandler(ParsedTally& out, const std::string& where) : out_(out), where_(where) {}

  bool null() { return value(nullptr); }
  bool boolean(bool v) { return value(v); }
  bool number_integer(json::number_integer_t v) {
    if (!streaming()) return value(v);
    if (skip_ == 0) {
      if (stream_ == column_count) {
        col().refuse("is below 1", count_expected);  // the parser reads every integer >= 0 as unsigned
      } else if (!col().refused) {
        col().numbers.push_back(static_cast<double>(v));
      }
      ++col().elements;
    }
    return true;
  }
  bool number_unsigned(json::number_unsigned_t v) {
    if (!streaming()) return value(v);
    if (skip_ == 0) {
      if (stream_ == column_count) {
        if (v < 1) col().refuse("is below 1", count_expected);
        else if (!col().refused) col().counts.push_back(v);
      } else if (!col().refused) {
        col().numbers.push_back(static_cast<double>(v));
      }
      ++col().elements;
    }
    return true;
  }
  bool number_float(json::number_float_t v, const json::string_t& text) {
    if (!streaming()) {
      (void)text;
      return value(v);
    }
    if (skip_ == 0) {
      if (stream_ == column_count) col().refuse("is not an integer", count_expected);
      else if (!std::isfinite(v)) col().refuse("is not finite", {});
      else if (!col().refused) col().numbers.push_back(v);
      ++col().elements;
    }
    return true;
  }
  bool string(json::string_t& v) { return value(std::move(v)); }
  bool binary(json::binary_t& v) { return value(json::binary(std::move(static_cast<json::binary_t::container_type&>(v)))); }

  bool start_object(std::size_t) {
    deeper();
    if (streaming()) return not_a_number_container();
    open(json::object());
    return true;
  }
  bool key(json::string_t& k) {
    if (stack_.size() == 1 && depth_ == 1) {
      for (std::size_t c = 0; c < columns; ++c)
        if (k == column_names[c]) {
          pending_ = c;
          return true;
        }
    }
    key_ = std::move(k);
    return true;
  }
  bool end_object() {
    --depth_;
    if (streaming()) {
      --skip_;
      return true;
    }
    stack_.pop_back();
    return true;
  }
  bool start_array(std::size_t) {
    deeper();
    if (streaming()) return not_a_number_container();
    if (pending_ != columns) {
      stream_ = pending_;
      pending_ = columns;
      out_.doc.erase(column_names[stream_]);
      col().clear();
      col().present = true;
      return true;
    }
    open(json::array());
    return true;
  }
  bool end_array() {
    --depth_;
    if (streaming()) {
      if (skip_ > 0) --skip_;
      else stream_ = columns;
      return true;
    }
    stack_.pop_back();
    return true;
  }
  bool parse_error(std::size_t byte, const std::string&, const nlohmann::detail::exception& e) {
    error_byte_ = byte;
    overflow_ = e.id == 406;  // out_of_range: a number beyond a double's range
    return false;
  }

  std::uint64_t error_byte() const noexcept { return error_byte_; }
  bool overflow() const noexcept { return overflow_; }

 private:
  static constexpr const char* count_expected = "a count of rows (an integer >= 1)";

  bool streaming() const noexcept { return stream_ != columns; }
  StreamedColumn& col() { return out_.column[stream_]; }

  void deeper() {
    if (++depth_ > io::max_json_nesting)
      throw Error(ErrorKind::artifact,
                  "the tally nests arrays or objects more than " + std::to_string(io::max_json_nesting) +
                      " levels deep",
                  at_file(where_), {}, "a JSON document written by plumb tally");
  }
  // An object or array as an element of a per-score array: refused, and
  // skipped to its end.
  bool not_a_number_container() {
    if (skip_++ == 0) {
      col().refuse(stream_ == column_count ? "is not an integer" : "is not a number",
                   stream_ == column_count ? count_expected : "");
      ++col().elements;
    }
    return true;
  }
  // Where the next value of the tree goes.
  json& slot() {
    if (pending_ != columns) {
      // A per-score field that is not an array: kept in the tree, where the
      // checks find it and refuse it.
      key_ = column_names[pending_];
      out_.column[pending_].clear();
      pending_ = columns;
    }
    if (stack_.empty()) return out_.doc;
    json& top = *stack_.back();
    if (top.is_array()) {
      top.push_back(nullptr);
      return top.back();
    }
    return top[key_];
  }
  template <class V>
  bool value(V&& v) {
    if (streaming()) {
      if (skip_ == 0) {
        col().refuse(stream_ == column_count ? "is not an integer" : "is not a number",
                     stream_ == column_count ? count_expected : "");
        ++col().elements;
      }
      return true;
    }
    slot() = json(std::forward<V>(v));
    return true;
  }
  void open(json container) {
    json& s = slot();
    s = std::move(container);
    stack_.push_back(&s);
  }

  ParsedTally& out_;
  const std::string& where_;
  std::vector<json*> stack_;  // the open objects and arrays of the tree
  std::string key_;
  int depth_ = 0;
  std::size_t pending_ = columns;  // a per-score field's name, its value not seen yet
  std::size_t stream_ = columns;   // the per-score array streaming now
  int skip_ = 0;                   // depth inside an element that is an object or array
  std::uint64_t error_byte_ = 0;
  bool overflow_ = false;
};

std::vector<double> take_numbers(const json& doc, StreamedColumn& c, const char* key, const std::string& where) {
  if (!c.present) {
    jf::require(doc, key, where, key);
    jf::fail(where, key, "is not an array", "an array of finite numbers");
  }
  if (c.refused) jf::fail(where, std::string(key) + "[" + std::to_string(c.refused_at) + "]", c.refusal, c.expected);
  return std::move(c.numbers);
}

std::vector<std::uint64_t> take_counts(const json& doc, StreamedColumn& c, const std::string& where) {
  if (!c.present) {
    jf::require(doc, "count", where, "count");
    jf::fail(where, "count", "is not an array", "an array of counts");
  }
  if (c.refused) jf::fail(where, "count[" + std::to_string(c.refused_at) + "]", c.refusal, c.expected);
  return std::move(c.counts);
}

}  // namespace

namespace {

// The tally's text written piece by piece, byte for byte what nlohmann's
// dump(1) of the document as a JSON tree gives (fields in the tree's key
// order, one space of indent per level, numbers in its shortest form), so
// that no tree of the per-score arrays is built. Every string is escaped
// before the first byte is written, so a name that is not UTF-8 is refused
// before any output.
class TallyWriter {
 public:
  template <class Flush>
  void write(const Tally& t, Flush&& flush) {
    first_source_ = t.sources.empty() ? std::string() : t.sources.front().file;
    const std::string score_column = quoted(t.score_column), scale = quoted(std::string(to_string(t.scale)));
    const std::string label_column = quoted(t.label_column), positive_rule = quoted(t.positive_rule);
    const std::string weight_column = t.weight_column.empty() ? "null" : quoted(t.weight_column);
    const std::string tool = quoted(std::string("plumb ") + version_string);
    std::vector<std::string> sources;  // each source's three fields, quoted
    for (const TallySource& src : t.sources) {
      sources.push_back(quoted(src.file));
      sources.push_back(quoted(src.sha256));
    }
    auto out = [&](std::string_view text) {
      buffer_.append(text);
      if (buffer_.size() >= (1 << 16)) {
        flush(std::string_view(buffer_));
        buffer_.clear();
      }
    };
    // Keys in the order of the tree (std::map of std::string).
    out("{\n");
    array(out, "count", t.count, false);
    field(out, "format", quoted(tally_format_marker), false);
    field(out, "format_version", std::to_string(tally_format_version), false);
    if (t.grid_step) {
      out(" \"grid\": {\n  \"space\": \"logit\",\n  \"step\": ");
      out(number(*t.grid_step));
      out("\n },\n");
    } else {
      field(out, "grid", "null", false);
    }
    field(out, "label_column", label_column, false);
    array(out, "negative", t.negative, false);
    array(out, "positive", t.positive, false);
    field(out, "positive_rule", positive_rule, false);
    field(out, "positives", number(t.positives), false);
    field(out, "rows", std::to_string(t.rows), false);
    if (t.rows_skipped) field(out, "rows_skipped", std::to_string(*t.rows_skipped), false);
    field(out, "scale", scale, false);
    array(out, "score", t.score, false);
    field(out, "score_column", score_column, false);
    field(out, "score_max", number(t.score_max), false);
    field(out, "score_min", number(t.score_min), false);
    if (t.sources.empty()) {
      out(" \"sources\": [],\n");
    } else {
      out(" \"sources\": [\n");
      for (std::size_t i = 0; i < t.sources.size(); ++i) {
        out("  {\n   \"file\": ");
        out(sources[2 * i]);
        out(",\n   \"rows\": ");
        out(std::to_string(t.sources[i].rows));
        out(",\n   \"sha256\": ");
        out(sources[2 * i + 1]);
        out(i + 1 < t.sources.size() ? "\n  },\n" : "\n  }\n");
      }
      out(" ],\n");
    }
    field(out, "tool", tool, false);
    field(out, "unit_weights", t.unit_weights ? "true" : "false", false);
    field(out, "weight_column", weight_column, false);
    if (!t.weight_sq.empty()) array(out, "weight_sq", t.weight_sq, false);
    field(out, "weight_total", number(t.weight_total), true);
    out("}\n");
    if (!buffer_.empty()) flush(std::string_view(buffer_));
    buffer_.clear();
  }

 private:
  std::string quoted(const std::string& s) const {
    try {
      return json(s).dump();
    } catch (const json::type_error&) {
      // JSON text must be UTF-8; the only free text is names from the input.
      Location loc;
      loc.file = first_source_;
      throw Error(ErrorKind::input, "a file or column name is not valid UTF-8 and cannot be kept in the tally", loc,
                  {}, "UTF-8 file and column names");
    }
  }

  // A double as dump() writes it (null when not finite).
  std::string_view number(double x) {
    if (!std::isfinite(x)) return "null";
    char* end = nlohmann::detail::to_chars(digits_, digits_ + sizeof digits_, x);
    return {digits_, static_cast<std::size_t>(end - digits_)};
  }
  std::string_view number(std::uint64_t x) {
    const auto r = std::to_chars(digits_, digits_ + sizeof digits_, x);
    return {digits_, static_cast<std::size_t>(r.ptr - digits_)};
  }

  template <class Out>
  static void field(Out& out, std::string_view key, std::string_view value, bool last) {
    out(" \"");
    out(key);
    out("\": ");
    out(value);
    out(last ? "\n" : ",\n");
  }
  template <class Out, class T>
  void array(Out& out, std::string_view key, const std::vector<T>& values, bool last) {
    out(" \"");
    out(key);
    if (values.empty()) {
      out("\": []");
    } else {
      out("\": [\n");
      for (std::size_t i = 0; i < values.size(); ++i) {
        out("  ");
        out(number(values[i]));
        out(i + 1 < values.size() ? ",\n" : "\n");
      }
      out(" ]");
    }
    out(last ? "\n" : ",\n");
  }

  std::string buffer_;
  std::string first_source_;  // names the input in a refusal
  char digits_[64];
};

}  // namespace

std::string tally_to_text(const Tally& t) {
  std::string text;
  TallyWriter().write(t, [&text](std::string_view piece) { text.append(piece); });
  return text;
}

void write_tally(const Tally& t, io::OutputFile& out) {
  TallyWriter().write(t, [&out](std::string_view piece) { out.write(piece); });
}

namespace {

// The checks of a parsed document, in a fixed order whatever the order of
// its fields (so a file damaged in two places names the same field as
// before): the marker and version first, then the fields, then the
// per-score arrays, whose element problems were noted while they streamed.
Tally check_parsed(ParsedTally& p, const std::string& where) {
  const json& doc = p.doc;
  if (!doc.is_object() || !doc.contains("format") || doc.at("format") != tally_format_marker)
    throw Error(ErrorKind::artifact, "not a plumb tally", at_file(where), {},
                std::string("a JSON object with \"format\": \"") + tally_format_marker + "\" (from plumb tally)");
  const std::int64_t version = jf::require_integer(doc, "format_version", where, "format_version");
  if (version != 1 && version != tally_format_version)
    throw Error(ErrorKind::artifact,
                version > tally_format_version
                    ? "the tally has format version " + std::to_string(version) + ", written by a newer plumb"
                    : "the tally has unknown format version " + std::to_string(version),
                at_file(where), {}, "format version " + std::to_string(tally_format_version) + " (plumb " + version_string + ")");

  Tally t;
  t.score_column = jf::require_string(doc, "score_column", where, "score_column");
  const std::string scale_text = jf::require_string(doc, "scale", where, "scale");
  const auto scale = parse_scale(scale_text);
  if (!scale) jf::fail(where, "scale", "is '" + scale_text + "'", "probability, logit or margin");
  t.scale = *scale;
  t.label_column = jf::require_string(doc, "label_column", where, "label_column");
  t.positive_rule = jf::require_string(doc, "positive_rule", where, "positive_rule");
  t.weight_column = string_or_null(doc, "weight_column", where);
  const json& grid = jf::require(doc, "grid", where, "grid");
  if (!grid.is_null()) {
    if (!grid.is_object()) jf::fail(where, "grid", "is neither an object nor null", "null or {\"space\": \"logit\", \"step\": H}");
    if (jf::require_string(grid, "space", where, "grid.space") != "logit")
      jf::fail(where, "grid.space", "is not 'logit'", "'logit'");
    const double step = jf::require_finite(grid, "step", where, "grid.step");
    if (!(step > 0.0)) jf::fail(where, "grid.step", "is not positive", "a step > 0");
    if (t.scale == Scale::margin)
      jf::fail(where, "grid", "is given for margin scores", "null: a logit grid needs probability or logit scores");
    t.grid_step = step;
  }
  t.rows = jf::require_count(doc, "rows", where, "rows");
  // Optional in format 2 (plumb before it ignores it): absent, nothing recorded.
  if (doc.contains("rows_skipped")) t.rows_skipped = jf::require_count(doc, "rows_skipped", where, "rows_skipped");
  t.weight_total = jf::require_finite(doc, "weight_total", where, "weight_total");
  if (!(t.weight_total >= 0.0)) jf::fail(where, "weight_total", "is negative", "a total weight >= 0");
  t.positives = jf::require_finite(doc, "positives", where, "positives");
  if (!(t.positives >= 0.0 && t.positives <= t.weight_total))
    jf::fail(where, "positives", "lies outside [0, weight_total]", "the weight of the positive rows");
  t.unit_weights = jf::require_bool(doc, "unit_weights", where, "unit_weights");
  if (t.unit_weights && t.weight_total != static_cast<double>(t.rows))
    jf::fail(where, "weight_total", "differs from rows although unit_weights is true", "rows, when every row weighs 1");
  t.score_min = jf::require_finite(doc, "score_min", where, "score_min");
  t.score_max = jf::require_finite(doc, "score_max", where, "score_max");
  if (!valid_on_scale(t.score_min, t.scale)) jf::fail(where, "score_min", "is not a valid score on its scale");
  if (!valid_on_scale(t.score_max, t.scale)) jf::fail(where, "score_max", "is not a valid score on its scale");
  if (t.rows > 0 && !(t.score_min <= t.score_max)) jf::fail(where, "score_max", "lies below score_min");

  const json& sources = jf::require(doc, "sources", where, "sources");
  if (!sources.is_array()) jf::fail(where, "sources", "is not an array", "an array of {file, sha256, rows}");
  for (std::size_t i = 0; i < sources.size(); ++i) {
    const std::string at = "sources[" + std::to_string(i) + "]";
    TallySource s;
    s.file = jf::require_string(sources[i], "file", where, at + ".file");
    s.sha256 = jf::require_string(sources[i], "sha256", where, at + ".sha256");
    if (s.sha256.size() != 64 || s.sha256.find_first_not_of("0123456789abcdef") != std::string::npos)
      jf::fail(where, at + ".sha256", "is not 64 lowercase hexadecimal digits", "a SHA-256 digest");
    s.rows = jf::require_count(sources[i], "rows", where, at + ".rows");
    t.sources.push_back(std::move(s));
  }
  jf::require_string(doc, "tool", where, "tool");

  t.score = take_numbers(doc, p.column[column_score], "score", where);
  t.count = take_counts(doc, p.column[column_count], where);
  t.negative = take_numbers(doc, p.column[column_negative], "negative", where);
  t.positive = take_numbers(doc, p.column[column_positive], "positive", where);
  const std::size_t n = t.score.size();
  if (version >= 2 && (p.column[column_weight_sq].present || doc.contains("weight_sq"))) {
    if (t.weight_column.empty())
      jf::fail(where, "weight_sq", "is given for a tally without a weight column", "no weight_sq: every square is 1");
    t.weight_sq = take_numbers(doc, p.column[column_weight_sq], "weight_sq", where);
    if (t.weight_sq.size() != n)
      jf::fail(where, "weight_sq", "differs in length from score", "one sum of squared weights per score");
    for (std::size_t i = 0; i < n; ++i)
      if (!(t.weight_sq[i] >= 0.0))
        jf::fail(where, "weight_sq[" + std::to_string(i) + "]", "is negative", "a sum of squares >= 0");
  }
  if (t.count.size() != n || t.negative.size() != n || t.positive.size() != n)
    jf::fail(where, "count", "and the other per-score arrays differ in length from score",
             "score, count, negative and positive of equal length");
  std::uint64_t counted = 0;
  for (std::size_t i = 0; i < n; ++i) {
    const std::string at = "[" + std::to_string(i) + "]";
    if (!valid_on_scale(t.score[i], t.scale))
      jf::fail(where, "score" + at, "is not a valid score on the " + scale_text + " scale");
    if (i > 0 && !(t.score[i] > t.score[i - 1]))
      jf::fail(where, "score" + at, "does not lie above the previous score", "scores in strictly ascending order");
    if (!(t.negative[i] >= 0.0)) jf::fail(where, "negative" + at, "is negative", "a weight >= 0");
    if (!(t.positive[i] >= 0.0)) jf::fail(where, "positive" + at, "is negative", "a weight >= 0");
    if (!(t.negative[i] + t.positive[i] > 0.0))
      jf::fail(where, "positive" + at, "and negative" + at + " are both 0", "a score with rows of positive weight");
    if (t.unit_weights && (std::floor(t.negative[i]) != t.negative[i] || std::floor(t.positive[i]) != t.positive[i]))
      jf::fail(where, "negative" + at, "or positive" + at + " is not a whole number although unit_weights is true",
               "counts of rows when every row weighs 1");
    if (t.unit_weights && t.negative[i] + t.positive[i] != static_cast<double>(t.count[i]))
      jf::fail(where, "count" + at, "differs from the weight of its rows although unit_weights is true",
               "negative + positive = count when every row weighs 1");
    counted += t.count[i];
    if (counted > t.rows) jf::fail(where, "count", "adds up to more than rows", "at most rows in all");
  }
  if (t.unit_weights && counted != t.rows)
    jf::fail(where, "count", "adds up to " + std::to_string(counted) + ", not rows (" + std::to_string(t.rows) + ")",
             "every row counted once when every row weighs 1");
  if (n > 0 && (t.score.front() < t.score_min || t.score.back() > t.score_max))
    jf::fail(where, "score", "lies outside [score_min, score_max]", "scores within the stated range");
  return t;
}


// Parses `bytes` and checks the document; `where` names it in messages.
Tally read_tally(TallyBytes& bytes, const std::string& where) {
  ParsedTally parsed;
  TallyHandler handler(parsed, where);
  if (!json::sax_parse(ByteIterator{&bytes}, ByteIterator{nullptr}, &handler)) {
    if (handler.overflow())
      throw Error(ErrorKind::artifact, "the tally holds a number too large for a double", at_file(where), {},
                  "finite numbers, as written by plumb tally");
    Location loc = at_file(where);
    bytes.locate(handler.error_byte(), loc);
    const std::uint64_t size = bytes.drain();
    throw Error(ErrorKind::artifact,
                handler.error_byte() >= size ? "the tally ends early (truncated?)" : "the tally is not valid JSON", loc,
                {}, "a complete JSON document written by plumb tally");
  }
  return check_parsed(parsed, where);
}

}  // namespace

Tally tally_from_text(const std::string& text, const std::string& where) {
  TallyBytes bytes(text);
  return read_tally(bytes, where);
}

Tally load_tally(const std::string& path, std::string* sha256) {
  io::ByteSourceOptions read_options;
  read_options.decompress = true;  // an artifact written with -o NAME.gz
  io::ByteSource source(path, read_options);
  TallyBytes bytes(source);
  if (bytes.at_end())
    throw Error(ErrorKind::artifact, "the tally is empty", at_file(source.name()), {},
                "a JSON document written by plumb tally");
  Tally t = read_tally(bytes, source.name());
  bytes.drain();  // the digest is of every byte, trailing ones included
  if (sha256) *sha256 = source.sha256_hex();
  return t;
}

}  // namespace plumb
