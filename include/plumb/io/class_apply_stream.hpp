#pragma once
// Streaming a score file through a multi-class map: every record passed
// through byte for byte with the K calibrated probabilities (and optionally
// the most probable class) appended, in input order, on one thread or
// several, with the same bytes for any thread count.
//
// The reading thread takes records with CsvReader::next() (so quoted fields
// and their line numbers are the reader's) and copies each record's bytes
// and its K score fields into blocks; worker threads parse, check, map and
// format the blocks; the calling thread writes them in input order. At most
// a few blocks per thread are in flight, so memory stays flat.
#include <cstdint>
#include <string>
#include <vector>

#include "plumb/class_map.hpp"
#include "plumb/io/apply_stream.hpp"
#include "plumb/io/csv.hpp"
#include "plumb/io/labelled_input.hpp"
#include "plumb/io/output.hpp"

namespace plumb::io {

struct ClassApplyOptions {
  // The file column (0-based) of each class's scores, in the map's class order.
  std::vector<std::size_t> score_columns;
  // A row with a missing score (any of its K): refuse, skip (left out) or
  // empty (K empty probabilities, and an empty class).
  MissingPolicy missing = MissingPolicy::refuse;
  int digits = 0;          // as ApplyStreamOptions::digits
  bool argmax = false;     // append the most probable class's name (the first on a tie)
  double sum_tolerance = 1e-3;  // probability scale: as ClassColumns::sum_tolerance
  unsigned threads = 1;
  std::size_t block_rows = 8192;
};

struct ClassApplyCounts {
  std::uint64_t rows = 0, clipped = 0, missing = 0, skipped = 0;
};

// Writes each data record of `reader` as its raw bytes, then for each class
// the delimiter and probability_text(q_k), then with `argmax` the delimiter
// and the class name (quoted when it must be), then its line end. The header
// is the caller's to write. Throws plumb::Error(input) located by file, line,
// column and column name for the first bad record in input order: the
// reader's refusals, a missing score under refuse (message "the score is
// missing", expecting missing_score_expected), a score that is not a decimal
// number, and a row class_row_problem() refuses (a logit that is not finite,
// a probability outside [0, 1], probabilities whose sum misses 1 by more
// than sum_tolerance). Records before it may have been written to `out`
// (an OutputFile that is never committed leaves no file).
ClassApplyCounts class_apply_stream(CsvReader& reader, const ClassCalibrationMap& map, OutputFile& out,
                                    const ClassApplyOptions& options, const ApplyProgress& progress = {});

}  // namespace plumb::io
