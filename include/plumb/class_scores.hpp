#pragma once
// Rows of a K-class classifier's scores, as the multi-class commands hand
// them between their parts: the reader (io) fills one, the multi-class maps
// fit on and map one, and the multi-class diagnostics read one. Only data
// here; the contracts of the functions that fill or read it are in their
// own headers.
#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

namespace plumb {

enum class ClassScale {
  probability,  // each row is K probabilities summing to 1 (within the reader's stated tolerance)
  logit,        // each row is K real logits (any additive constant per row; finite)
};

struct ClassScores {
  // K >= 2 distinct class names, in the order of the score columns unless
  // the user fixed another order; index k of a row's values is classes[k].
  std::vector<std::string> classes;
  ClassScale scale = ClassScale::probability;
  std::size_t rows = 0;
  // rows * K values, row-major: values[r * K + k] is row r's score for class k.
  std::vector<double> values;
  // The class index of each row's label (rows entries), or empty when the
  // rows are unlabelled (apply).
  std::vector<std::uint32_t> label;
  // Empty (every row weighs 1) or rows entries, each finite and >= 0.
  std::vector<double> weight;

  std::size_t k() const noexcept { return classes.size(); }
  const double* row(std::size_t r) const noexcept { return values.data() + r * classes.size(); }
};

}  // namespace plumb
