#pragma once
// A calibration map written as a dependency-free C function (C99 and the C
// library's <math.h> only), for scoring where plumb cannot run: an embedded
// device, a service in another language through its C interface.
//
// The function repeats the map's own arithmetic operation for operation:
// the same clipping, log, log1p and exp calls, the same logistic function,
// the same interpolation with the same precomputed gaps, the same search.
// Built with the same C library and without contraction of a * b + c into
// a fused multiply-add (GCC and Clang: -ffp-contract=off; the x86-64
// baseline has no FMA), and without -ffast-math, it returns the double
// plumb apply computes, bit for bit.
//
// For a score apply refuses (not a number, infinite, outside [0, 1] on the
// probability scale) the function returns NaN.
#include <string>

#include "plumb/calibration_map.hpp"
#include "plumb/class_map.hpp"

namespace plumb::io {

struct CExportOptions {
  // The function's name: a C identifier (letters, digits, underscores, not
  // starting with a digit). Helpers are static and named NAME_...
  std::string function_name = "plumb_calibrated";
  // Said in the file's first comment ("an isotonic map from late.map.json").
  std::string source_note;
};

// The C source text: a comment, #include <math.h>, static helpers and
// tables, then `double NAME(double score)`. Throws plumb::Error(usage) when
// the name is not a C identifier or the map is of a kind it does not know.
std::string c_export(const CalibrationMap& map, const CExportOptions& options);

// A multi-class map (temperature, vector, dirichlet, one_vs_rest) as
// `int NAME(const double score[K], double out[K])`: the row's K scores in
// the map's class order on its scale, the K probabilities apply writes, bit
// for bit under the same build conditions. The steps are the map's own
// (plumb/class_map.hpp): the log-probabilities (floor, logarithms, their
// sum's logarithm; or log-sum-exp with the row's largest logit taken out),
// the linear part, then softmax with the largest value taken out first; for
// one_vs_rest each class's binary map written as c_export writes it, then
// the renormalisation. It returns 0, or 1 with NaN in every out[j] for a
// row apply refuses: a logit not finite; a probability outside [0, 1] or
// not a number, or a row whose sum is further than `sum_tolerance` from 1.
struct ClassCExportOptions {
  std::string function_name = "plumb_calibrated";
  std::string source_note;
  // The tolerance apply uses on the probability scale (the artifact's
  // fit_options.sum_tolerance, else the default).
  double sum_tolerance = 1e-3;
};
std::string class_c_export(const ClassCalibrationMap& map, const ClassCExportOptions& options);

}  // namespace plumb::io
