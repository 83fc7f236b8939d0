#pragma once
// A score tally: the sufficient statistics of labelled scores for every fit
// and for the report, mergeable across shards. Per distinct score it keeps
// the number of rows and the weight of negative and of positive rows;
// nothing else about the rows survives. docs/tally-format.md describes its
// JSON form (src/io/tally_io.cpp).
#include <cstdint>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/calibration_map.hpp"
#include "plumb/scale.hpp"

namespace plumb {

inline constexpr const char* tally_format_marker = "plumb-tally";
// Version 2 adds weight_sq (tallies of weighted rows); version 1 files are
// still read, without it.
inline constexpr int tally_format_version = 2;

// One input file a tally was built from.
struct TallySource {
  std::string file;    // as named on the command line ("<stdin>" for standard input)
  std::string sha256;  // of its bytes, lowercase hex
  std::uint64_t rows = 0;
};

struct Tally {
  // What the scores and labels are; merging requires all of these to agree.
  std::string score_column;
  Scale scale = Scale::probability;
  std::string label_column;
  std::string positive_rule;  // LabelRule::describe()
  std::string weight_column;  // empty: every row weighed 1
  // A logit grid of this step (> 0) rounded the scores; nullopt: exact.
  std::optional<double> grid_step;

  // Totals over every row read, including rows of zero weight.
  std::uint64_t rows = 0;
  // Rows left out for a missing score or label (--missing skip), which
  // `rows` does not count. nullopt: the tally was made without --missing
  // skip (none could be left out), or by a plumb that did not record it.
  std::optional<std::uint64_t> rows_skipped;
  double weight_total = 0.0;
  double positives = 0.0;  // weight of positive rows
  bool unit_weights = true;  // every row weighed exactly 1 (true when unweighted)
  double score_min = 0.0, score_max = 0.0;  // of every row's (rounded, on a grid) score
  std::vector<TallySource> sources;

  // Per distinct score, ascending and strictly increasing: the rows of
  // positive weight with that score and the weight of its negative and of
  // its positive rows. A score whose rows all weigh 0 is left out.
  std::vector<double> score;
  std::vector<std::uint64_t> count;
  std::vector<double> negative, positive;
  // With a weight column: per score the sum of its rows' squared weights
  // (what the report's effective sample sizes need). Empty without a weight
  // column (every square is 1, so it is count), and for tallies of format 1
  // or merged with one, which did not keep it.
  std::vector<double> weight_sq;
};

// The per-score sums of `data` (rows of one score summed in input order,
// after a stable sort, exactly as tally_by_score does; -0 is kept as +0).
// Fills score, count, negative and positive only.
void tally_scores(const FitData& data, Tally& out);

// The per-score sums of unweighted rows handed over block by block (a
// reader can parse the next block while this one is counted). finish()
// fills score, count, negative and positive exactly as tally_scores does on
// all the rows added, whatever the blocks were: every sum is a count, the
// same in any order. Each block's scores are sorted and counted, and the
// counted runs are merged pairwise as they pile up (a binary counter), so
// the work is that of one merge sort and the memory that of the distinct
// scores, not of the rows. Labels are read as tally_scores reads them
// (> 0.5 is positive). Not thread-safe: one thread adds.
class UnweightedTallyBuilder {
 public:
  void add(std::span<const double> score, std::span<const double> label);
  void finish(Tally& out);

 private:
  struct Run {
    std::vector<double> score;
    std::vector<std::uint64_t> negative, positive;
  };
  static Run merge(const Run& a, const Run& b);
  void carry(Run run);
  std::vector<Run> levels_;  // levels_[k]: empty, or the merged runs of 2^k blocks
};

// Round a score to the nearest multiple of `step` in log-odds: on the logit
// scale the score itself, on the probability scale logit(p), mapped back
// (0 and 1 are kept). Precondition: step > 0, scale is not margin, score valid.
// The probability moves by at most step / 8 (docs/tally-format.md).
double round_to_logit_grid(double score, Scale scale, double step) noexcept;

// Why two tallies cannot be merged (empty when they can): different score
// column, scale, label column, label rule, weight column or grid.
std::string merge_conflict(const Tally& a, const Tally& b);

// The merged tally: scores matched exactly, counts and weights summed
// (a's weight + b's weight), rows_skipped summed over the tallies that
// record it (nullopt when neither does), sources concatenated and sorted by file name
// and hash (so the order of merging leaves no trace in them). Merging unweighted
// tallies is exact (integer sums below 2^53) and so independent of order;
// weighted sums are as exact as double addition. Throws plumb::Error(usage)
// naming the conflict when merge_conflict is not empty.
Tally merge_tallies(const Tally& a, const Tally& b);

// The tally as the entries fit_map uses: equal to tally_by_score() of the
// rows it was built from.
ScoreTally to_score_tally(const Tally& tally);

// Fit a map on a tally: the same map, diagnostics included, as fit_map on
// the rows the tally was built from (fit_map itself goes through the tally).
// Throws as fit_map does.
std::unique_ptr<CalibrationMap> fit_map_on_tally(std::string_view kind, const Tally& tally,
                                                 const MapOptions& options = {});

}  // namespace plumb
