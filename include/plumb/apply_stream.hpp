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

#include "plumb/calibration_map.hpp"
#include "plumb/csv.hpp"
#include "plumb/output.hpp"

namespace plumb::io {

struct ApplyStreamOptions {
  std::size_t score_column = 0;  // 0-based index in the reader's header
  bool missing_is_empty = false;  // a blank score: empty probability (else an error)
  unsigned threads = 1;           // worker threads; 1 parses on the calling thread
  std::size_t block_bytes = std::size_t{1} << 20;
  // The fitted score range, for counting scores outside it.
  double fitted_min = 0.0, fitted_max = 0.0;
  // Advice appended to the refusal of a score outside the map's scale (see
  // io::score_problem); the caller's words, naming its own options.
  std::string other_scales_hint{};
};

struct ApplyCounts {
  std::uint64_t rows = 0, outside = 0, clamped = 0, clipped = 0, missing = 0;
};

using ApplyProgress = std::function<void(std::uint64_t rows, std::uint64_t bytes,
                                         std::optional<std::uint64_t> total_bytes)>;

// Writes every data record of `reader` to `out` as: its raw bytes, the
// delimiter, the shortest text of map(score) (or nothing for a blank score
// with missing_is_empty), its line end. Blank lines are dropped. The header
// is the caller's to write. Throws plumb::Error(input), located by file,
// line and column, for the first bad record in input order: a ragged row, a
// NUL byte, a quoting error, a score that is blank, not a decimal number or
// not valid on the map's scale; the records before it may have been written
// to `out` (an OutputFile that is never committed leaves no file).
ApplyCounts apply_stream(CsvReader& reader, const CalibrationMap& map, OutputFile& out,
                         const ApplyStreamOptions& options, const ApplyProgress& progress = {});

}  // namespace plumb::io
