// The tally file's reader and writer (plumb/io/tally_io.hpp), which stream the
// document instead of building a JSON tree of it. The outside reference is
// nlohmann_json's own tree: its parser's error offset (turned into a line
// and column as the reader did before it streamed) and its dump(1) of the
// document that docs/tally-format.md describes. Tallies are invented.
#include <algorithm>
#include <catch2/catch.hpp>
#include <cstdio>
#include <fstream>
#include <functional>
#include <iterator>
#include <nlohmann/json.hpp>
#include <random>
#include <string>
#include <vector>

#include "io/json_input.hpp"
#include "plumb/error.hpp"
#include "plumb/io/output.hpp"
#include "plumb/tally.hpp"
#include "plumb/io/tally_io.hpp"
#include "plumb/version.hpp"

using nlohmann::json;
using plumb::Tally;

namespace {

// A valid tally of `n` scores in (0, 1) with unit weights.
Tally unit_tally(std::size_t n, std::uint64_t seed) {
  std::mt19937_64 g(seed);
  std::uniform_int_distribution<std::uint64_t> count(1, 40);
  Tally t;
  t.score_column = "risk";
  t.label_column = "missed";
  t.positive_rule = "label > 0.5";
  for (std::size_t i = 0; i < n; ++i) {
    const std::uint64_t c = count(g);
    const std::uint64_t pos = std::uniform_int_distribution<std::uint64_t>(0, c)(g);
    t.score.push_back(static_cast<double>(i + 1) / static_cast<double>(n + 2));
    t.count.push_back(c);
    t.negative.push_back(static_cast<double>(c - pos));
    t.positive.push_back(static_cast<double>(pos));
    t.rows += c;
    t.positives += static_cast<double>(pos);
  }
  t.weight_total = static_cast<double>(t.rows);
  t.score_min = t.score.front();
  t.score_max = t.score.back();
  t.sources.push_back({"shard-1.csv", std::string(64, 'a'), t.rows});
  return t;
}

// The document as a JSON tree, field by field as docs/tally-format.md lists
// them; its dump(1) is what tally_to_text wrote before it streamed.
json tree_of(const Tally& t) {
  json doc;
  doc["format"] = plumb::tally_format_marker;
  doc["format_version"] = plumb::tally_format_version;
  doc["score_column"] = t.score_column;
  doc["scale"] = std::string(plumb::to_string(t.scale));
  doc["label_column"] = t.label_column;
  doc["positive_rule"] = t.positive_rule;
  doc["weight_column"] = t.weight_column.empty() ? json(nullptr) : json(t.weight_column);
  doc["grid"] = t.grid_step ? json{{"space", "logit"}, {"step", *t.grid_step}} : json(nullptr);
  doc["rows"] = t.rows;
  doc["weight_total"] = t.weight_total;
  doc["positives"] = t.positives;
  doc["unit_weights"] = t.unit_weights;
  doc["score_min"] = t.score_min;
  doc["score_max"] = t.score_max;
  json sources = json::array();
  for (const plumb::TallySource& s : t.sources) sources.push_back({{"file", s.file}, {"sha256", s.sha256}, {"rows", s.rows}});
  doc["sources"] = sources;
  doc["tool"] = std::string("plumb ") + plumb::version_string;
  doc["score"] = t.score;
  doc["count"] = t.count;
  doc["negative"] = t.negative;
  doc["positive"] = t.positive;
  if (!t.weight_sq.empty()) doc["weight_sq"] = t.weight_sq;
  return doc;
}

std::string scratch(const std::string& name) { return std::string(PLUMB_TEST_BINARY_DIR) + "/tally_io_" + name; }

void write_file(const std::string& path, const std::string& text) {
  std::ofstream(path, std::ios::binary) << text;
}

// The refusal of `f`, or an empty message when it does not throw.
plumb::Error refusal_of(const std::function<void()>& f) {
  try {
    f();
  } catch (const plumb::Error& e) {
    return e;
  }
  return plumb::Error(plumb::ErrorKind::internal, "");
}

}  // namespace

TEST_CASE("tally io: the text is the JSON tree's dump(1), for every kind of tally", "[tally][io]") {
  std::vector<Tally> tallies;
  tallies.push_back(unit_tally(50, 1));
  Tally weighted = unit_tally(30, 2);
  weighted.weight_column = "parcels";
  weighted.unit_weights = false;
  for (std::size_t i = 0; i < weighted.score.size(); ++i) {
    weighted.negative[i] *= 0.1;  // weights with many digits
    weighted.positive[i] *= 1e-7;
    weighted.weight_sq.push_back(weighted.negative[i] * 3.3e21);
  }
  tallies.push_back(weighted);
  Tally grid = unit_tally(5, 3);
  grid.grid_step = 0.001;
  grid.scale = plumb::Scale::logit;
  grid.score = {-0.0, -1e-300, 2.5, 1e17, 123456789.125};
  tallies.push_back(grid);
  Tally empty;
  empty.score_column = "a \"quoted\" name\\ with\ta tab and \xc3\xa9";
  empty.label_column = "\x01";
  empty.positive_rule = "label in {yes, \xe2\x9c\x93}";
  tallies.push_back(empty);  // no rows, no sources, empty arrays
  Tally merged = unit_tally(3, 4);
  merged.sources.push_back({"<stdin>", std::string(64, 'f'), 0});
  tallies.push_back(merged);

  for (const Tally& t : tallies) {
    const std::string expected = tree_of(t).dump(1) + "\n";
    CHECK(plumb::tally_to_text(t) == expected);
    const std::string path = scratch("written.json");
    {
      plumb::io::OutputFile out(path);
      plumb::write_tally(t, out);
      out.commit();
    }
    std::ifstream in(path, std::ios::binary);
    const std::string written((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    CHECK(written == expected);
  }
}

TEST_CASE("tally io: a name that is not UTF-8 is refused before anything is written", "[tally][io]") {
  Tally t = unit_tally(20000, 5);  // more than one write buffer of numbers comes before the names
  t.score_column = "risk\xff";
  const std::string path = scratch("not_utf8.json");
  std::remove(path.c_str());
  const plumb::Error e = refusal_of([&] {
    plumb::io::OutputFile out(path);
    plumb::write_tally(t, out);
    out.commit();
  });
  CHECK(e.kind() == plumb::ErrorKind::input);
  CHECK(e.message() == "a file or column name is not valid UTF-8 and cannot be kept in the tally");
  CHECK(e.where().file == "shard-1.csv");
  CHECK_FALSE(std::ifstream(path).good());
}

TEST_CASE("tally io: a damaged document is refused at the line and column the JSON tree's parser gives",
          "[tally][io]") {
  // About 340 KB: the file is read in several chunks of 64 KiB.
  const std::string text = plumb::tally_to_text(unit_tally(8000, 6));
  REQUIRE(text.size() > 4 * 65536);
  REQUIRE_NOTHROW(plumb::tally_from_text(text, "t"));
  std::mt19937_64 g(7);
  std::vector<std::size_t> at = {0, 1, 65535, 65536, 65537, 131071, 131072, 131073, text.size() - 2, text.size() - 1};
  for (int k = 0; k < 60; ++k) at.push_back(std::uniform_int_distribution<std::size_t>(0, text.size() - 1)(g));
  const std::string bytes = "x]}[{,:\"\n-.e";
  std::size_t refused_as_json = 0;
  for (std::size_t i : at) {
    for (int variant = 0; variant < 3; ++variant) {
      std::string bad = text;
      if (variant == 0) bad.resize(i);                                           // truncated
      else if (variant == 1) bad[i] = bytes[static_cast<std::size_t>(g() % bytes.size())];  // one byte changed
      else bad.insert(i, "\n\n");                                                // lines added, then cut
      if (variant == 2) bad.resize(std::min(bad.size(), i + 3 + g() % 7));
      // The reference: the tree parser's error offset, located in the whole text.
      std::string expected_message;
      plumb::Location expected;
      try {
        const json parsed = json::parse(bad);
        CHECK(parsed.is_object());
      } catch (const json::parse_error& e) {
        plumb::io::locate_byte(bad, e.byte, expected);
        expected_message = e.byte >= bad.size() ? "the tally ends early (truncated?)" : "the tally is not valid JSON";
      } catch (const json::exception&) {
        expected_message = "the tally holds a number too large for a double";
      }
      const plumb::Error from_text = refusal_of([&] { plumb::tally_from_text(bad, "t"); });
      write_file(scratch("damaged.json"), bad);
      const plumb::Error from_file = refusal_of([&] { plumb::load_tally(scratch("damaged.json")); });
      INFO("damage " << variant << " at byte " << i);
      if (bad.empty()) {
        CHECK(from_file.message() == "the tally is empty");
        continue;
      }
      // Both streamed reads refuse alike, from one string or from a file in chunks.
      CHECK(from_file.message() == from_text.message());
      CHECK(from_file.where().line == from_text.where().line);
      CHECK(from_file.where().column == from_text.where().column);
      if (expected_message.empty()) continue;  // still JSON: refused (or not) by the checks
      ++refused_as_json;
      CHECK(from_text.message() == expected_message);
      CHECK(from_text.where().line == expected.line);
      CHECK(from_text.where().column == expected.column);
    }
  }
  CHECK(refused_as_json > 150);  // most damage breaks the JSON itself
}

TEST_CASE("tally io: the checks run in one order whatever the order of the fields", "[tally][io]") {
  const Tally t = unit_tally(4, 8);
  json doc = tree_of(t);
  // Fields written with the per-score arrays last, as a person might.
  auto text_of = [](const json& d, const std::vector<std::string>& last) {
    std::string s = "{";
    for (auto it = d.begin(); it != d.end(); ++it)
      if (std::find(last.begin(), last.end(), it.key()) == last.end()) s += json(it.key()).dump() + ":" + it.value().dump() + ",";
    for (const std::string& k : last)
      if (d.contains(k)) s += json(k).dump() + ":" + d[k].dump() + ",";
    s.back() = '}';
    return s;
  };
  const std::vector<std::string> arrays_last = {"count", "score", "negative", "positive"};
  const std::vector<std::string> arrays_first = {};  // the tree's order: count before format
  auto refused = [&](const json& d, const std::vector<std::string>& order) {
    return refusal_of([&] { plumb::tally_from_text(text_of(d, order), "t"); }).message();
  };
  for (const auto& order : {arrays_last, arrays_first}) {
    CHECK(refused(doc, order).empty());
    json bad = doc;
    bad["count"][1] = 1.5;
    CHECK(refused(bad, order) == "field 'count[1]' is not an integer");
    bad["count"][2] = json::array({1});
    CHECK(refused(bad, order) == "field 'count[1]' is not an integer");  // the first bad element
    bad["format"] = "plumb-map";
    CHECK(refused(bad, order) == "not a plumb tally");  // the marker is checked first
    bad = doc;
    bad["negative"][3] = json::object({{"a", json::array({1, 2})}});
    CHECK(refused(bad, order) == "field 'negative[3]' is not a number");
    bad["score"][0] = "0.5";
    CHECK(refused(bad, order) == "field 'score[0]' is not a number");  // score is checked before negative
    bad = doc;
    bad["count"][0] = 0;
    CHECK(refused(bad, order) == "field 'count[0]' is below 1");
    bad["count"][0] = -3;
    CHECK(refused(bad, order) == "field 'count[0]' is below 1");
    bad = doc;
    bad["positive"] = "many";
    CHECK(refused(bad, order) == "field 'positive' is not an array");
    bad.erase("positive");
    CHECK(refused(bad, order) == "field 'positive' is missing");
  }
  // A field given twice: the last one counts, as in a JSON tree.
  const std::string good = plumb::tally_to_text(t);
  CHECK(refusal_of([&] { plumb::tally_from_text("{\"score\": \"x\"," + good.substr(1), "t"); }).message().empty());
  CHECK(refusal_of([&] { plumb::tally_from_text("{\"count\": [[]]," + good.substr(1), "t"); }).message().empty());
  CHECK(refusal_of([&] {
          plumb::tally_from_text(good.substr(0, good.size() - 3) + ", \"score\": 5}", "t");
        }).message() == "field 'score' is not an array");
  CHECK(refusal_of([&] {
          plumb::tally_from_text(good.substr(0, good.size() - 3) + ", \"score\": [0.5]}", "t");
        }).message() == "field 'count' and the other per-score arrays differ in length from score");
  // Nested fields of the same names are not the per-score arrays.
  json nested = doc;
  nested["grid"] = json{{"space", "logit"}, {"step", 0.5}, {"score", "x"}};
  CHECK(refused(nested, arrays_last).empty());
}

TEST_CASE("tally io: nesting deeper than 64 levels is refused wherever it is", "[tally][io]") {
  const std::string good = plumb::tally_to_text(unit_tally(3, 9));
  const std::string deep = std::string(65, '[') + std::string(65, ']');
  for (const std::string& text : {deep, good.substr(0, good.size() - 3) + ", \"extra\": " + deep + "}",
                                  "{\"count\": " + deep + "," + good.substr(1)}) {
    const plumb::Error e = refusal_of([&] { plumb::tally_from_text(text, "t"); });
    CHECK(e.kind() == plumb::ErrorKind::artifact);
    CHECK(e.message() == "the tally nests arrays or objects more than 64 levels deep");
  }
  const std::string just = std::string(64, '[') + std::string(64, ']');
  CHECK(refusal_of([&] { plumb::tally_from_text(just, "t"); }).message() == "not a plumb tally");
}
