#pragma once
// Streaming a score file through a calibration map: every record passed
// through byte for byte with the calibrated probability appended, in input
// order, on one thread or several.
//
// The input is cut into blocks of whole records. Blocks without quote
// characters (the common case) are parsed by the worker threads straight
// from their bytes: one pass per line for the line end, the field count and
// the score field, the score read with a fast exact path for plain decimals,
// and no allocation per row. Records with quotes go through CsvReader::next()
// on the reading thread. The output is byte-identical for any thread count.
#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <string_view>
#include <utility>

#include "plumb/calibration_map.hpp"
#include "plumb/io/csv.hpp"
#include "plumb/io/labelled_input.hpp"
#include "plumb/io/output.hpp"

namespace plumb::io {

struct ApplyStreamOptions {
  std::size_t score_column = 0;  // 0-based index in the reader's header
  // A missing score (is_missing_value): refuse (an error), skip (the record
  // is left out of the output) or empty (an empty probability).
  MissingPolicy missing = MissingPolicy::refuse;
  // The probability's text: 0 for the shortest that reads back to the same
  // double, 1 to 17 for that many significant digits (probability_text()).
  int digits = 0;
  // Write the probability in place of the score field (else append it as a
  // new last field).
  bool replace = false;
  // After the probability, two more fields: the lower and upper ends of the
  // map's interval (CalibrationMap::interval), in the same text rule; both
  // empty where the probability is. The caller checks has_interval().
  bool interval = false;
  unsigned threads = 1;           // worker threads; 1 parses on the calling thread
  std::size_t block_bytes = std::size_t{1} << 20;
  // The fitted score range, for counting scores outside it.
  double fitted_min = 0.0, fitted_max = 0.0;
  // Advice appended to the refusal of a score outside the map's scale (see
  // io::score_problem); the caller's words, naming its own options.
  std::string other_scales_hint{};
};

struct ApplyCounts {
  // rows: records written (missing: those of them with an empty
  // probability); skipped: records left out.
  std::uint64_t rows = 0, outside = 0, clamped = 0, clipped = 0, missing = 0, skipped = 0;
};

using ApplyProgress = std::function<void(std::uint64_t rows, std::uint64_t bytes,
                                         std::optional<std::uint64_t> total_bytes)>;

// The text of probability `p` at [first, last) (room for 32 bytes), and the
// end of what was written: with digits 0, the shortest decimal that reads
// back to the same double (std::to_chars); with digits 1 to 17, `digits`
// significant digits as printf's "%.{digits}g" writes them (trailing zeros
// dropped, an exponent below 1e-4).
char* probability_text(char* first, char* last, double p, int digits);

// The byte offset and length of field `index` (0-based) of a record as
// stored, quotes included, as a well-formed RFC 4180 record is split by
// `delimiter`; (record.size(), 0) when it has fewer fields.
std::pair<std::size_t, std::size_t> stored_field(std::string_view record, std::size_t index, char delimiter);

// Writes every data record of `reader` to `out` as: its raw bytes, the
// delimiter, probability_text(map(score)) (or nothing for a missing score
// under MissingPolicy::empty), with `interval` the delimiter and each end of
// the interval, its line end; with `replace`, the record's raw
// bytes with the score field's stored bytes replaced by that text. A record
// with a missing score under MissingPolicy::skip is left out. Blank lines are
// dropped, except in a one-column file, where they are records with an empty
// score. The header
// is the caller's to write. Throws plumb::Error(input), located by file,
// line and column, for the first bad record in input order: a ragged row, a
// NUL byte, a quoting error, a score that is missing (under
// MissingPolicy::refuse, with the message missing_score_expected), not a decimal number or
// not valid on the map's scale; the records before it may have been written
// to `out` (an OutputFile that is never committed leaves no file).
inline constexpr const char* missing_score_expected =
    "a score (or --missing skip to leave the row out, or --missing empty to write an empty probability)";
ApplyCounts apply_stream(CsvReader& reader, const CalibrationMap& map, OutputFile& out,
                         const ApplyStreamOptions& options, const ApplyProgress& progress = {});

}  // namespace plumb::io
