// Fuzz target for io::read_class_scores (plumb/io/class_input.hpp) with the
// score columns p_* and the columns y (label) and w (weight), and for the
// temperature and vector maps fitted on what it accepts.
//
// Input layout: byte 0 chooses the options (bit 0: logit scale; bit 1:
// weighted by "w"; bit 2: --missing skip; bit 3: tab-separated instead of
// detected); the rest is the text.
//
// Invariants beyond "no crash":
//  - only plumb::Error escapes;
//  - accepted input has at least one row, K >= 2 distinct classes, K values
//    per row, one label (< K) per row and one weight (finite, >= 0) per row
//    when weighted; logits are finite; probabilities lie in [0, 1] and each
//    row's sum lies within the tolerance of 1;
//  - a fitted temperature or vector map (or an Error(fit)) gives every row K
//    probabilities in [0, 1] summing to 1 within 1e-9.
#include <cmath>
#include <set>
#include <string>

#include "fuzz_support.hpp"
#include "plumb/class_map.hpp"
#include "plumb/io/class_input.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size < 1) return 0;
  const std::uint8_t flags = data[0];
  const std::string_view text(reinterpret_cast<const char*>(data) + 1, size - 1);

  plumb::io::ClassColumns columns;
  columns.scores = {"p_*"};
  columns.label = "y";
  columns.scale = (flags & 1) ? plumb::ClassScale::logit : plumb::ClassScale::probability;
  if (flags & 2) columns.weight = "w";
  if (flags & 4) columns.missing = plumb::io::MissingPolicy::skip;
  const char delimiter = (flags & 8) ? '\t' : 0;

  const plumb::fuzz::MemoryFile file(text);
  plumb::io::ClassRows rows;
  const bool accepted =
      plumb::fuzz::only_plumb_errors([&] { rows = plumb::io::read_class_scores(file.path(), columns, delimiter); });
  if (!accepted) return 0;

  const plumb::ClassScores& s = rows.data;
  const std::size_t k = s.k(), n = s.rows;
  FUZZ_CHECK(n >= 1 && k >= 2, "no rows or fewer than two classes");
  FUZZ_CHECK(std::set<std::string>(s.classes.begin(), s.classes.end()).size() == k, "a class named twice");
  FUZZ_CHECK(s.values.size() == n * k && s.label.size() == n, "not K values and one label per row");
  FUZZ_CHECK(s.weight.size() == ((flags & 2) ? n : 0), "not one weight per row");
  for (std::size_t r = 0; r < n; ++r) {
    FUZZ_CHECK(s.label[r] < k, "a label index out of range");
    double sum = 0.0;
    for (std::size_t j = 0; j < k; ++j) {
      const double v = s.row(r)[j];
      FUZZ_CHECK(std::isfinite(v), "a value that is not finite");
      if (s.scale == plumb::ClassScale::probability) FUZZ_CHECK(v >= 0.0 && v <= 1.0, "a probability outside [0, 1]");
      sum += v;
    }
    if (s.scale == plumb::ClassScale::probability)
      FUZZ_CHECK(std::fabs(sum - 1.0) <= columns.sum_tolerance, "a row whose sum misses 1");
    if (!s.weight.empty()) FUZZ_CHECK(std::isfinite(s.weight[r]) && s.weight[r] >= 0.0, "a bad weight");
  }

  for (const char* kind : {"temperature", "vector"}) {
    std::unique_ptr<plumb::ClassCalibrationMap> map;
    plumb::Error caught(plumb::ErrorKind::internal, "");
    if (!plumb::fuzz::only_plumb_errors([&] { map = plumb::fit_class_map(kind, s); }, &caught)) {
      FUZZ_CHECK(caught.kind() == plumb::ErrorKind::fit, std::string(kind) + ": an error other than fit");
      continue;
    }
    std::vector<double> q(k);
    for (std::size_t r = 0; r < n; ++r) {
      map->map(s.row(r), q.data());
      double sum = 0.0;
      for (double v : q) {
        FUZZ_CHECK(v >= 0.0 && v <= 1.0, std::string(kind) + ": a probability outside [0, 1]");
        sum += v;
      }
      FUZZ_CHECK(std::fabs(sum - 1.0) <= 1e-9, std::string(kind) + ": a row that does not sum to 1");
    }
  }
  return 0;
}
