#include "plumb/tally_io.hpp"

#include <cmath>

#include "core/json_fields.hpp"
#include "io/byte_source.hpp"
#include "io/json_input.hpp"
#include "plumb/error.hpp"
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

json optional_string(const std::string& s) { return s.empty() ? json(nullptr) : json(s); }

std::string string_or_null(const json& doc, const char* key, const std::string& where) {
  const json& v = jf::require(doc, key, where, key);
  if (!v.is_string() && !v.is_null()) jf::fail(where, key, "is neither a string nor null", "a column name, or null");
  return v.is_string() ? v.get<std::string>() : std::string();
}

std::vector<std::uint64_t> count_array(const json& doc, const char* key, const std::string& where) {
  const json& v = jf::require(doc, key, where, key);
  if (!v.is_array()) jf::fail(where, key, "is not an array", "an array of counts");
  std::vector<std::uint64_t> out;
  out.reserve(v.size());
  for (std::size_t i = 0; i < v.size(); ++i) {
    const json& c = v[i];
    const std::string at = std::string(key) + "[" + std::to_string(i) + "]";
    if (!c.is_number_integer()) jf::fail(where, at, "is not an integer", "a count of rows (an integer >= 1)");
    if (c.is_number_unsigned() ? c.get<std::uint64_t>() < 1 : c.get<std::int64_t>() < 1)
      jf::fail(where, at, "is below 1", "a count of rows (an integer >= 1)");
    out.push_back(c.get<std::uint64_t>());
  }
  return out;
}

}  // namespace

std::string tally_to_text(const Tally& t) {
  json doc;
  doc["format"] = tally_format_marker;
  doc["format_version"] = tally_format_version;
  doc["score_column"] = t.score_column;
  doc["scale"] = std::string(to_string(t.scale));
  doc["label_column"] = t.label_column;
  doc["positive_rule"] = t.positive_rule;
  doc["weight_column"] = optional_string(t.weight_column);
  doc["grid"] = t.grid_step ? json{{"space", "logit"}, {"step", *t.grid_step}} : json(nullptr);
  doc["rows"] = t.rows;
  doc["weight_total"] = t.weight_total;
  doc["positives"] = t.positives;
  doc["unit_weights"] = t.unit_weights;
  doc["score_min"] = t.score_min;
  doc["score_max"] = t.score_max;
  json sources = json::array();
  for (const TallySource& s : t.sources) sources.push_back({{"file", s.file}, {"sha256", s.sha256}, {"rows", s.rows}});
  doc["sources"] = std::move(sources);
  doc["tool"] = std::string("plumb ") + version_string;
  doc["score"] = t.score;
  doc["count"] = t.count;
  doc["negative"] = t.negative;
  doc["positive"] = t.positive;
  if (!t.weight_sq.empty()) doc["weight_sq"] = t.weight_sq;
  try {
    return doc.dump(1) + "\n";
  } catch (const json::type_error&) {
    // JSON text must be UTF-8; the only free text is names from the input.
    Location loc;
    loc.file = t.sources.empty() ? std::string() : t.sources.front().file;
    throw Error(ErrorKind::input, "a file or column name is not valid UTF-8 and cannot be kept in the tally", loc,
                {}, "UTF-8 file and column names");
  }
}

Tally tally_from_text(const std::string& text, const std::string& where) {
  if (io::json_nested_deeper_than(text))
    throw Error(ErrorKind::artifact,
                "the tally nests arrays or objects more than " + std::to_string(io::max_json_nesting) + " levels deep",
                at_file(where), {}, "a JSON document written by plumb tally");
  json doc;
  try {
    doc = json::parse(text);
  } catch (const json::out_of_range&) {
    throw Error(ErrorKind::artifact, "the tally holds a number too large for a double", at_file(where), {},
                "finite numbers, as written by plumb tally");
  } catch (const json::parse_error& e) {
    Location loc = at_file(where);
    io::locate_byte(text, e.byte, loc);
    throw Error(ErrorKind::artifact,
                e.byte >= text.size() ? "the tally ends early (truncated?)" : "the tally is not valid JSON", loc, {},
                "a complete JSON document written by plumb tally");
  }
  if (!doc.is_object() || !doc.contains("format") || doc["format"] != tally_format_marker)
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

  t.score = jf::require_finite_array(doc, "score", where, "score");
  t.count = count_array(doc, "count", where);
  t.negative = jf::require_finite_array(doc, "negative", where, "negative");
  t.positive = jf::require_finite_array(doc, "positive", where, "positive");
  const std::size_t n = t.score.size();
  if (version >= 2 && doc.contains("weight_sq")) {
    if (t.weight_column.empty())
      jf::fail(where, "weight_sq", "is given for a tally without a weight column", "no weight_sq: every square is 1");
    t.weight_sq = jf::require_finite_array(doc, "weight_sq", where, "weight_sq");
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

Tally load_tally(const std::string& path, std::string* sha256) {
  io::ByteSourceOptions read_options;
  read_options.decompress = true;  // an artifact written with -o NAME.gz
  io::ByteSource source(path, read_options);
  std::string text;
  char chunk[1 << 16];
  for (std::size_t n; (n = source.read(chunk, sizeof chunk)) > 0;) text.append(chunk, n);
  if (text.empty())
    throw Error(ErrorKind::artifact, "the tally is empty", at_file(source.name()), {},
                "a JSON document written by plumb tally");
  if (sha256) *sha256 = source.sha256_hex();
  return tally_from_text(text, source.name());
}

}  // namespace plumb
