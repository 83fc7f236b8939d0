// Fuzz target for apply's streaming path (plumb/io/apply_stream.hpp), against
// a reference built from the record reader alone.
//
// Input layout: byte 0 chooses the options (bits 0-1: threads 1 to 4;
// bit 2: --missing empty; bits 3-7: the block size, 16 + 24 * value bytes,
// so that even small inputs are cut into many blocks), byte 1 the score
// column (bits 0-3, modulo the header's width), --replace (bit 4),
// --digits (bits 5-6: shortest, 1, 3, 17) and, without bit 2 of byte 0,
// --missing skip (bit 7); the rest is the text.
//
// The reference reads the same text with CsvReader::next() and, for every
// record, writes its raw bytes, the separator, the text of the map's value
// of parse_number(score) (std::to_chars, or snprintf "%.Ng" with --digits;
// nothing for a missing score with --missing empty; the record is left out
// with --missing skip) and its line end; with --replace, the raw bytes with
// the score field's stored bytes (found by its own scan of the record)
// replaced by that text. The first record it cannot take ends it with the
// message apply gives.
//
// Invariants beyond "no crash":
//  - only plumb::Error escapes;
//  - when the reference takes every record, apply_stream succeeds and
//    writes exactly the reference's bytes, with the same counts;
//  - when the reference refuses the text, apply_stream refuses it with the
//    same message (file, line, column, value), except that with gzip data
//    which of a corrupt stream and an earlier bad record is met first can
//    depend on how far each reads ahead: then both must refuse.
#include <charconv>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <iterator>
#include <optional>
#include <string>

#include <nlohmann/json.hpp>

#include "fuzz_support.hpp"
#include "plumb/io/apply_stream.hpp"
#include "plumb/calibration_map.hpp"
#include "plumb/io/csv.hpp"
#include "plumb/io/labelled_input.hpp"
#include "plumb/io/output.hpp"
#include "plumb/scale.hpp"

namespace {

using plumb::fuzz::shown;

const plumb::CalibrationMap& the_map() {
  // An isotonic map with linear interpolation between three blocks.
  static const std::unique_ptr<plumb::CalibrationMap> map = plumb::load_map(
      "isotonic", plumb::Scale::probability,
      nlohmann::json{{"between_blocks", "linear"},
                     {"block_score_lo", {0.0, 0.3, 0.7}},
                     {"block_score_hi", {0.1, 0.5, 1.0}},
                     {"block_value", {0.05, 0.4, 0.9}},
                     {"block_weight", {10.0, 20.0, 10.0}}},
      "fuzz map");
  return *map;
}

struct Outcome {
  std::string bytes;
  plumb::io::ApplyCounts counts;
  std::optional<std::string> error;
  bool gzip_error = false;
};

// The error apply reports for a bad score (as src/io/apply_stream.cpp words it).
std::string score_message(const plumb::io::CsvReader& reader, const plumb::io::Record& r, std::size_t col,
                          std::string_view text) {
  plumb::Location loc;
  loc.file = reader.name();
  loc.line = r.line;
  loc.column = col + 1;
  loc.column_name = reader.header()[col];
  if (plumb::io::is_missing_value(text))
    return plumb::Error(plumb::ErrorKind::input, "the score is missing", loc, std::string(text),
                        plumb::io::missing_score_expected)
        .what();
  const plumb::io::ScoreProblem why = plumb::io::score_problem(text, plumb::Scale::probability);
  return plumb::Error(plumb::ErrorKind::input, why.message + " (the map was fitted on the probability scale)", loc,
                      std::string(text), why.expected)
      .what();
}

using plumb::io::MissingPolicy;

// The stored bytes of field `col` of a well-formed record: a field opening
// with a quote ends at its closing (undoubled) quote, any other at the next
// delimiter.
std::pair<std::size_t, std::size_t> field_bytes(std::string_view raw, std::size_t col, char delimiter) {
  std::size_t begin = 0;
  for (std::size_t k = 0;; ++k) {
    std::size_t end = begin;
    if (end < raw.size() && raw[end] == '"') {
      ++end;
      while (end < raw.size() && !(raw[end] == '"' && (end + 1 == raw.size() || raw[end + 1] != '"'))) {
        end += raw[end] == '"' ? 2 : 1;
      }
      ++end;
    }
    while (end < raw.size() && raw[end] != delimiter) ++end;
    if (k == col) return {begin, end - begin};
    begin = end + 1;
  }
}

Outcome reference(const std::string& path, std::size_t col_choice, MissingPolicy missing, bool replace, int digits) {
  Outcome o;
  try {
    plumb::io::CsvReader reader(path);
    const std::size_t col = col_choice % reader.header().size();
    const plumb::CalibrationMap& map = the_map();
    plumb::io::Record r;
    while (reader.next(r)) {
      const std::string_view s = r.fields[col];
      const std::optional<double> v = plumb::io::parse_number(s);
      std::string field;
      if (v && plumb::valid_on_scale(*v, plumb::Scale::probability)) {
        const plumb::Mapped m = map.map(*v);
        char text[64];
        if (digits == 0)
          field.assign(text, std::to_chars(text, text + sizeof text, m.probability).ptr);
        else
          field.assign(text, static_cast<std::size_t>(std::snprintf(text, sizeof text, "%.*g", digits, m.probability)));
        ++o.counts.rows;
        o.counts.clamped += m.outside_fit_range ? 1 : 0;
      } else if (missing == MissingPolicy::empty && plumb::io::is_missing_value(s)) {
        ++o.counts.rows;
        ++o.counts.missing;
      } else if (missing == MissingPolicy::skip && plumb::io::is_missing_value(s)) {
        ++o.counts.skipped;
        continue;
      } else {
        o.error = score_message(reader, r, col, s);
        return o;
      }
      if (replace) {
        const auto [at, length] = field_bytes(r.raw, col, reader.delimiter());
        o.bytes.append(r.raw.substr(0, at));
        o.bytes += field;
        o.bytes.append(r.raw.substr(at + length));
      } else {
        o.bytes.append(r.raw);
        o.bytes += reader.delimiter();
        o.bytes += field;
      }
      o.bytes.append(r.line_end);
    }
  } catch (const plumb::Error& e) {
    o.error = e.what();
    o.gzip_error = o.error->find("gzip") != std::string::npos;
  }
  return o;
}

Outcome streamed(const std::string& path, const std::string& out_path, std::size_t col_choice, MissingPolicy missing,
                 bool replace, int digits, unsigned threads, std::size_t block_bytes) {
  Outcome o;
  plumb::Error caught(plumb::ErrorKind::internal, "");
  const bool ok = plumb::fuzz::only_plumb_errors(
      [&] {
        plumb::io::CsvReader reader(path);
        plumb::io::ApplyStreamOptions options;
        options.score_column = col_choice % reader.header().size();
        options.missing = missing;
        options.replace = replace;
        options.digits = digits;
        options.threads = threads;
        options.block_bytes = block_bytes;
        options.fitted_min = 0.0;
        options.fitted_max = 1.0;
        plumb::io::OutputFile out(out_path);
        o.counts = plumb::io::apply_stream(reader, the_map(), out, options);
        out.commit();
      },
      &caught);
  if (!ok) {
    o.error = caught.what();
    o.gzip_error = o.error->find("gzip") != std::string::npos;
    return o;
  }
  std::ifstream in(out_path, std::ios::binary);
  o.bytes.assign(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
  return o;
}

const std::string& scratch_dir() {
  static const std::string dir = [] {
    // In memory when the machine has /dev/shm: every input commits (and
    // syncs) one output file.
    std::string pattern = ::access("/dev/shm", W_OK) == 0 ? "/dev/shm/plumb-fuzz-apply-XXXXXX"
                                                           : "/tmp/plumb-fuzz-apply-XXXXXX";
    if (!::mkdtemp(pattern.data())) std::abort();
    return pattern;
  }();
  return dir;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size < 2) return 0;
  const unsigned threads = 1 + (data[0] & 3);
  const MissingPolicy missing = (data[0] & 4)    ? MissingPolicy::empty
                                : (data[1] & 128) ? MissingPolicy::skip
                                                  : MissingPolicy::refuse;
  const std::size_t block_bytes = 16 + 24 * static_cast<std::size_t>(data[0] >> 3);
  const std::size_t col_choice = data[1] & 0x0F;
  const bool replace = (data[1] & 0x10) != 0;
  static constexpr int digit_choices[4] = {0, 1, 3, 17};
  const int digits = digit_choices[(data[1] >> 5) & 3];
  const std::string text(reinterpret_cast<const char*>(data) + 2, size - 2);
  const plumb::fuzz::MemoryFile file(text);

  const Outcome want = reference(file.path(), col_choice, missing, replace, digits);
  const Outcome got = streamed(file.path(), scratch_dir() + "/out.csv", col_choice, missing, replace, digits,
                               threads, block_bytes);
  const std::string options = "threads " + std::to_string(threads) + ", block " + std::to_string(block_bytes) +
                              (missing == MissingPolicy::empty  ? ", missing empty"
                               : missing == MissingPolicy::skip ? ", missing skip"
                                                                : "") +
                              (replace ? ", replace" : "") + ", digits " + std::to_string(digits);

  if (want.error || got.error) {
    FUZZ_CHECK(want.error && got.error, "one side refused the text and the other did not (" + options +
                                            "): reference " + shown(want.error.value_or("-")) + ", apply " +
                                            shown(got.error.value_or("-")));
    if (!want.gzip_error && !got.gzip_error)
      FUZZ_CHECK(*want.error == *got.error, "different refusals (" + options + "): reference " + shown(*want.error) +
                                                ", apply " + shown(*got.error));
    return 0;
  }
  FUZZ_CHECK(got.bytes == want.bytes, "different output (" + options + "): reference " + shown(want.bytes) +
                                          ", apply " + shown(got.bytes));
  FUZZ_CHECK(got.counts.rows == want.counts.rows && got.counts.missing == want.counts.missing &&
                 got.counts.skipped == want.counts.skipped && got.counts.clamped == want.counts.clamped,
             "different counts (" + options + ")");
  return 0;
}
