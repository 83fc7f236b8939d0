#pragma once
// Mapping scores held in memory, shared by the C API (src/capi/c_api.cpp) and
// the Python module (src/python/module.cpp): the per-score check and the
// refusal `plumb apply` gives, for a score that comes as a double rather
// than as text.
#include <charconv>
#include <cmath>
#include <string>

#include "plumb/calibration_map.hpp"
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

}  // namespace plumb::embed
