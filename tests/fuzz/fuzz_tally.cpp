// Fuzz target for the tally file reader, tally_from_text
// (plumb/io/tally_io.hpp), and for merging. The input is the tally text.
//
// Invariants beyond "no crash":
//  - only plumb::Error escapes;
//  - a loaded tally has one count and two weights per score; scores valid
//    on its scale and strictly ascending; weights, totals and the score
//    range finite and >= 0 where they are weights; counts that do not
//    exceed the rows;
//  - tally_to_text of the loaded tally loads again and writes the same text
//    (a round trip);
//  - a tally merges with itself: same scores, counts, rows and weights
//    doubled (exact in binary floating point while finite), and the merged
//    tally writes and loads again;
//  - to_score_tally gives the entries fit_map uses: scores ascending, one
//    entry per score and label of positive weight;
//  - the streamed reader agrees with nlohmann's JSON tree parser: text the
//    tree parser refuses is refused as not JSON (or too deep, or a number
//    out of range), at the line and column of the tree parser's error
//    offset; text it accepts is never refused as not JSON;
//  - the streamed writer gives what the tree's dump(1) gives of the same
//    document (the tree of the written text, dumped again).
#include <cmath>
#include <nlohmann/json.hpp>
#include <string>

#include "fuzz_support.hpp"
#include "io/json_input.hpp"
#include "plumb/tally.hpp"
#include "plumb/io/tally_io.hpp"

namespace {

void check_tally(const plumb::Tally& t, const char* what) {
  const std::string in = std::string(what) + ": ";
  const std::size_t n = t.score.size();
  FUZZ_CHECK(t.count.size() == n && t.negative.size() == n && t.positive.size() == n,
             in + "per-score arrays of different lengths");
  std::uint64_t counted = 0;
  for (std::size_t i = 0; i < n; ++i) {
    FUZZ_CHECK(plumb::valid_on_scale(t.score[i], t.scale), in + "score " + std::to_string(i) + " invalid on its scale");
    if (i > 0) FUZZ_CHECK(t.score[i] > t.score[i - 1], in + "scores not strictly ascending at " + std::to_string(i));
    FUZZ_CHECK(std::isfinite(t.negative[i]) && t.negative[i] >= 0.0 && std::isfinite(t.positive[i]) &&
                   t.positive[i] >= 0.0,
               in + "a per-score weight is negative or not finite at " + std::to_string(i));
    FUZZ_CHECK(counted + t.count[i] >= counted, in + "counts overflow");
    counted += t.count[i];
  }
  FUZZ_CHECK(counted <= t.rows, in + "the per-score counts exceed the rows");
  FUZZ_CHECK(std::isfinite(t.weight_total) && t.weight_total >= 0.0 && std::isfinite(t.positives) &&
                 t.positives >= 0.0,
             in + "a total weight is negative or not finite");
  FUZZ_CHECK(std::isfinite(t.score_min) && std::isfinite(t.score_max), in + "the score range is not finite");
  if (t.grid_step) FUZZ_CHECK(std::isfinite(*t.grid_step) && *t.grid_step > 0.0, in + "a grid step that is not > 0");
}

bool same_numbers(const std::vector<double>& a, const std::vector<double>& b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i)
    if (!(a[i] == b[i] && std::signbit(a[i]) == std::signbit(b[i]))) return false;
  return true;
}

// The streamed reader's refusal of text that is not JSON, against the tree
// parser's. `refused` is the reader's error, if it refused.
void check_against_tree(const std::string& text, const plumb::Error* refused) {
  const bool not_json = refused && (refused->message() == "the tally is not valid JSON" ||
                                    refused->message() == "the tally ends early (truncated?)");
  const bool deep_or_huge = refused && (refused->message().find("levels deep") != std::string::npos ||
                                        refused->message() == "the tally holds a number too large for a double");
  try {
    const nlohmann::json tree = nlohmann::json::parse(text);
    FUZZ_CHECK(!not_json, "the tree parser accepts what the streamed reader refused as not JSON");
    (void)tree;
  } catch (const nlohmann::json::parse_error& e) {
    if (deep_or_huge) return;  // refused for depth before the tree parser's syntax error
    FUZZ_CHECK(not_json, "the tree parser refuses what the streamed reader did not refuse as not JSON");
    plumb::Location at;
    plumb::io::locate_byte(text, e.byte, at);
    FUZZ_CHECK(refused->where().line == at.line && refused->where().column == at.column,
               "the streamed reader's error lies elsewhere than the tree parser's");
    FUZZ_CHECK((refused->message() == "the tally ends early (truncated?)") == (e.byte >= text.size()),
               "the streamed reader and the tree parser disagree on whether the text ends early");
  } catch (const nlohmann::json::exception&) {
    FUZZ_CHECK(refused != nullptr, "the tree parser refuses a number the streamed reader took");
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  plumb::Tally t;
  plumb::Error refusal(plumb::ErrorKind::internal, "");
  const bool loaded =
      plumb::fuzz::only_plumb_errors([&] { t = plumb::tally_from_text(text, "fuzz input"); }, &refusal);
  // The tree parser recurses, so it is only asked about text that nests no deeper than the reader allows.
  if (!plumb::io::json_nested_deeper_than(text)) check_against_tree(text, loaded ? nullptr : &refusal);
  if (!loaded) return 0;
  check_tally(t, "loaded");

  // Round trip.
  std::string written;
  if (!plumb::fuzz::only_plumb_errors([&] { written = plumb::tally_to_text(t); })) return 0;
  plumb::Tally again;
  plumb::Error why(plumb::ErrorKind::internal, "");
  FUZZ_CHECK(plumb::fuzz::only_plumb_errors([&] { again = plumb::tally_from_text(written, "round trip"); }, &why),
             "the tally as written again does not load: " + plumb::format_error(why));
  FUZZ_CHECK(plumb::tally_to_text(again) == written, "writing the reloaded tally gives other text");
  FUZZ_CHECK(nlohmann::json::parse(written).dump(1) + "\n" == written,
             "the streamed writer's text differs from the JSON tree's dump of it");
  FUZZ_CHECK(same_numbers(again.score, t.score) && again.count == t.count && same_numbers(again.negative, t.negative) &&
                 same_numbers(again.positive, t.positive),
             "the round trip changed the per-score sums");

  // The entries a fit uses.
  const plumb::ScoreTally entries = plumb::to_score_tally(t);
  FUZZ_CHECK(entries.score.size() == entries.label.size() && entries.score.size() == entries.weight.size(),
             "to_score_tally: arrays of different lengths");
  for (std::size_t i = 0; i < entries.score.size(); ++i) {
    FUZZ_CHECK(entries.weight[i] > 0.0 && (entries.label[i] == 0.0 || entries.label[i] == 1.0),
               "to_score_tally: an entry without positive weight or with a label other than 0 or 1");
    if (i > 0) FUZZ_CHECK(entries.score[i] >= entries.score[i - 1], "to_score_tally: scores not ascending");
  }

  // Merge with itself.
  FUZZ_CHECK(plumb::merge_conflict(t, t).empty(), "a tally conflicts with itself: " + plumb::merge_conflict(t, t));
  plumb::Tally doubled;
  if (!plumb::fuzz::only_plumb_errors([&] { doubled = plumb::merge_tallies(t, t); }, &why)) {
    // Refusing is right only when a doubled sum is out of range.
    bool overflows = !std::isfinite(2.0 * t.weight_total) || !std::isfinite(2.0 * t.positives) ||
                     t.rows > (std::uint64_t{1} << 63);
    for (std::size_t i = 0; i < t.score.size(); ++i)
      overflows = overflows || !std::isfinite(2.0 * t.negative[i]) || !std::isfinite(2.0 * t.positive[i]) ||
                  t.count[i] > (std::uint64_t{1} << 63);
    FUZZ_CHECK(overflows, "merging a tally with itself was refused: " + plumb::format_error(why));
    return 0;
  }
  check_tally(doubled, "merged with itself");
  FUZZ_CHECK(same_numbers(doubled.score, t.score), "merging with itself changed the scores");
  FUZZ_CHECK(doubled.rows == 2 * t.rows, "merging with itself did not double the rows");
  for (std::size_t i = 0; i < t.score.size(); ++i) {
    FUZZ_CHECK(doubled.count[i] == 2 * t.count[i], "merging with itself did not double a count");
    FUZZ_CHECK(doubled.negative[i] == 2.0 * t.negative[i] && doubled.positive[i] == 2.0 * t.positive[i],
               "merging with itself did not double the weights of score " + std::to_string(t.score[i]));
  }
  FUZZ_CHECK(doubled.weight_total == 2.0 * t.weight_total && doubled.positives == 2.0 * t.positives,
             "merging with itself did not double the totals");
  std::string merged_text;
  FUZZ_CHECK(plumb::fuzz::only_plumb_errors([&] { merged_text = plumb::tally_to_text(doubled); }, &why),
             "the merged tally cannot be written: " + plumb::format_error(why));
  FUZZ_CHECK(plumb::fuzz::only_plumb_errors([&] { plumb::tally_from_text(merged_text, "merged"); }, &why),
             "the merged tally as written does not load: " + plumb::format_error(why));
  return 0;
}
