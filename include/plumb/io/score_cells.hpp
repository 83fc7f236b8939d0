#pragma once
// Reading a dump of scores into drift's grid cells (plumb/drift.hpp) in one
// streaming pass: memory is that of the cells, not of the rows.
#include <cstdint>
#include <string>

#include "plumb/drift.hpp"
#include "plumb/io/labelled_input.hpp"

namespace plumb::io {

struct ScoreCellsOptions {
  std::string score;                 // column, by name or 1-based index
  std::string label;                 // empty: unlabelled (every row counted, no positives)
  LabelRule rule;                    // how labels are read, when `label` is given
  Scale scale = Scale::probability;
  double step = default_reference_grid;
  MissingPolicy missing = MissingPolicy::refuse;  // refuse or skip
  char delimiter = 0;                // 0: detect (CsvReader's rule)
  // Rows whose raw score lies below `range_min` or above `range_max` are
  // counted in `outside` (the map's fitted range).
  double range_min = 0.0, range_max = 0.0;
  std::string other_scales_hint{};   // appended to the refusal of a score outside [0, 1]
};

struct ScoreCells {
  GridCells cells;
  std::string source, sha256;        // as named ("<stdin>"), SHA-256 of the bytes
  std::string score_column, label_column;  // resolved header names
  std::uint64_t rows = 0, skipped = 0, outside = 0;
};

// Reads `path` ("-": standard input; gzip or not). Unlabelled files take a
// bulk path over quote-free lines (one scan per line for the score field
// and the field count), quoted lines the record reader; labelled files go
// through read_labelled. Refuses with Error(input) located by file, line,
// column and column name: a ragged row, a missing score (unless skip) or
// label, a score that is not a number or not valid on the scale, a label
// the rule does not read, and scores spanning more than max_grid_cells
// cells (at the row that widens the span too far).
ScoreCells read_score_cells(const std::string& path, const ScoreCellsOptions& options);

}  // namespace plumb::io
