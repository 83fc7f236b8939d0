#pragma once
// Mapping scores held in memory, shared by the C API (src/capi/c_api.cpp) and
// the Python module (src/python/module.cpp): the per-score check and the
// refusal `plumb apply` gives, for a score that comes as a double rather
// than as text.
#include <charconv>
#include <cmath>
#include <string>

#include "plumb/calibration_map.hpp"
#include "plumb/class_map.hpp"
#include "plumb/io/class_artifact.hpp"
#include "plumb/io/class_input.hpp"
#include "plumb/error.hpp"
#include "plumb/scale.hpp"

namespace plumb::embed {

// True when map.map(score) may be called: the check `plumb apply` makes on
// each parsed score (valid_on_scale, written out as apply writes it).
inline bool admissible(double score, Scale scale) noexcept {
  return scale == Scale::probability ? score >= 0.0 && score <= 1.0 : std::isfinite(score);
}

// The refusal of a score that is not admissible(score, scale): an input
// error naming the score's position (`at`, e.g. "index 7" or "(2, 3)") and
// its value as the shortest text that reads back to it.
inline Error score_refusal(const std::string& at, double score, Scale scale) {
  char text[32];
  const auto end = std::to_chars(text, text + sizeof text, score).ptr;
  const std::string value(text, end);
  const std::string expected = scale == Scale::probability ? "a probability in [0, 1]" : "a finite number";
  std::string what;
  if (std::isnan(score))
    what = "is not a number";
  else if (std::isinf(score))
    what = "is infinite";
  else
    what = "lies outside [0, 1]";
  return Error(ErrorKind::input, "the score at " + at + " " + what, {}, value, expected);
}

// The sum tolerance `plumb apply` uses for the artifact's rows without
// --sum-tolerance: fit's, as the artifact records it, else the default.
inline double class_sum_tolerance(const ClassArtifact& artifact) {
  const auto at = artifact.fit_options.find("sum_tolerance");
  if (at != artifact.fit_options.end() && at->is_number()) return at->get<double>();
  return io::default_sum_tolerance;
}

// The multi-class artifact at `path`; a binary map's is refused as an
// artifact error naming the loader to use instead.
inline ClassArtifact load_class_artifact(const std::string& path) {
  ArtifactFile file = read_artifact_file(path);
  return class_artifact_from_text(file.text, file.name);
}

// Maps `rows` rows of map.k() scores (row-major) into `out` (which may be
// `scores`), each row checked first as apply checks it (io::class_row_problem).
// Throws Error(input) for the first refused row, naming the row (from 0),
// the class and the value; rows before it are written.
inline void map_class_rows(const ClassCalibrationMap& map, double sum_tolerance, const double* scores, double* out,
                           std::size_t rows) {
  const std::size_t k = map.k();
  for (std::size_t r = 0; r < rows; ++r) {
    const double* in = scores + r * k;
    if (const auto p = io::class_row_problem(in, k, map.scale(), sum_tolerance, "the artifact's sum tolerance",
                                             "the map's scale is " + std::string(to_string(map.scale())))) {
      if (p->message.rfind("the row's", 0) == 0)  // the sum: no one value to show
        throw Error(ErrorKind::input, "row " + std::to_string(r) + ": " + p->message, {}, {}, p->expected);
      char text[32];
      const auto end = std::to_chars(text, text + sizeof text, in[p->column]).ptr;
      throw Error(ErrorKind::input,
                  "row " + std::to_string(r) + ", class '" + map.classes()[p->column] + "': " + p->message, {},
                  std::string(text, end), p->expected);
    }
    map.map(in, out + r * k);
  }
}

}  // namespace plumb::embed
