// plumb_bench_read FILE SCORE LABEL: reads and parses the score and label
// columns of FILE exactly as `plumb fit` does (io::read_labelled, separator
// detected from the file) and prints the number of rows. Nothing is fitted:
// bench/run.sh times it as the floor that `plumb fit` is compared against.
#include <cstdio>
#include <exception>

#include "plumb/io/labelled_input.hpp"

int main(int argc, char** argv) {
  if (argc != 4) {
    std::fprintf(stderr, "usage: plumb_bench_read FILE SCORE LABEL\n");
    return 2;
  }
  try {
    plumb::io::LabelledColumns columns;
    columns.scores.push_back(plumb::io::ScoreColumn{argv[2], plumb::Scale::probability});
    columns.label = argv[3];
    const plumb::io::LabelledRows rows = plumb::io::read_labelled(argv[1], columns, plumb::io::LabelRule{});
    std::printf("%llu\n", static_cast<unsigned long long>(rows.rows));
    return 0;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "plumb_bench_read: %s\n", e.what());
    return 1;
  }
}
