// The Python module `plumb` (docs/library.md, "Python"): load a map artifact
// and map NumPy arrays with the numbers `plumb apply` writes; fit a map on
// arrays and save the artifact `plumb fit` writes; the report's figures as
// a dict. Every plumb::Error becomes plumb.Error carrying plumb's message.
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <algorithm>
#include <bit>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "capi/map_scores.hpp"
#include "io/byte_source.hpp"
#include "plumb/io/artifact.hpp"
#include "plumb/io/class_artifact.hpp"
#include "plumb/calibration_map.hpp"
#include "plumb/class_map.hpp"
#include "plumb/error.hpp"
#include "plumb/map_registry.hpp"
#include "plumb/io/output.hpp"
#include "plumb/report.hpp"
#include "plumb/io/report_render.hpp"
#include "plumb/version.hpp"

namespace py = pybind11;
using nlohmann::json;

namespace {

// plumb.Error and plumb.FitWarning, created at import.
PyObject* error_type = nullptr;
PyObject* fit_warning_type = nullptr;

// The cautions `plumb fit` prints (src/cli/fit.cpp), as Python warnings
// whose hints name this module's keywords. Throws py::error_already_set
// when warnings are turned into errors.
void warn_like_fit(const plumb::CalibrationMap& map, const std::string& kind, double weight_total) {
  const auto warn = [](const std::string& text) {
    if (PyErr_WarnEx(fit_warning_type, text.c_str(), 2) != 0) throw py::error_already_set();
  };
  const plumb::FitDiagnostics& d = map.diagnostics();
  const bool bins = kind == "histogram";
  if (!d.converged)
    warn("the fit did not converge after " + std::to_string(d.iterations) +
         " iterations (are the labels separated by the score?); the map is usable but its parameters are not a "
         "maximum");
  if (map.decreases_overall())
    warn(
        "the fitted map decreases (higher scores get lower probabilities); is the score oriented the other way, or "
        "are the labels' 0 and 1 swapped?");
  else if (!map.monotone())
    warn(std::string("the fitted map is not monotone: it rises with the score as a whole but falls between some "
                     "neighbouring ") +
         (bins ? "bins (noise in bins of few rows); fewer bins=, or kind='isotonic', gives a monotone map"
               : "scores; kind='isotonic' gives a monotone map"));
  if (map.reaches_zero_or_one())
    warn(std::string("the map gives a probability of exactly 0 or 1 for some scores (") + (bins ? "bins" : "blocks") +
         " whose rows all have one outcome), so any row there with the other outcome has infinite log loss; " +
         (bins ? "use fewer bins=, or kind='platt' or 'beta'"
               : "kind='platt' or 'beta' keeps every probability strictly between 0 and 1"));
  if (d.clipped > 0)
    warn(std::to_string(d.clipped) +
         " rows had probability scores within 1e-12 of 0 or 1 and were clipped there before taking log-odds");
  // The few-rows caution of every nonparametric kind, by the map registry's one threshold.
  if (plumb::find_map_kind(kind)->nonparametric && weight_total < plumb::few_rows_for_nonparametric) {
    char total[32];
    const auto end = std::to_chars(total, total + sizeof total, weight_total).ptr;
    warn(std::string(total, end) + " rows is few for " + plumb::kind_with_article(kind) +
         " map (common practice: about 1,000 or more); a platt or beta map is less likely to overfit");
  }
}

const char* kind_name(plumb::ErrorKind k) {
  switch (k) {
    case plumb::ErrorKind::internal:
      return "internal";
    case plumb::ErrorKind::usage:
      return "usage";
    case plumb::ErrorKind::input:
      return "input";
    case plumb::ErrorKind::artifact:
      return "artifact";
    case plumb::ErrorKind::io:
      return "io";
    case plumb::ErrorKind::fit:
      return "fit";
    case plumb::ErrorKind::threshold:
      return "threshold";
  }
  return "internal";
}

py::object to_python(const json& j) {
  switch (j.type()) {
    case json::value_t::null:
      return py::none();
    case json::value_t::boolean:
      return py::bool_(j.get<bool>());
    case json::value_t::number_integer:
      return py::int_(j.get<std::int64_t>());
    case json::value_t::number_unsigned:
      return py::int_(j.get<std::uint64_t>());
    case json::value_t::number_float:
      return py::float_(j.get<double>());
    case json::value_t::string:
      return py::str(j.get_ref<const std::string&>());
    case json::value_t::array: {
      py::list l;
      for (const json& e : j) l.append(to_python(e));
      return l;
    }
    case json::value_t::object: {
      py::dict d;
      for (auto it = j.begin(); it != j.end(); ++it) d[py::str(it.key())] = to_python(it.value());
      return d;
    }
    default:
      return py::none();
  }
}

plumb::Error usage(const std::string& message, const std::string& value, const std::string& expected) {
  return plumb::Error(plumb::ErrorKind::usage, message, {}, value, expected);
}

// The position of flat (C-order) element `flat` of an array of `shape`:
// "index 7" for one dimension, "(2, 3)" for more.
std::string position(std::size_t flat, const std::vector<py::ssize_t>& shape) {
  if (shape.size() <= 1) return "index " + std::to_string(flat);
  std::vector<std::size_t> at(shape.size());
  for (std::size_t d = shape.size(); d-- > 0;) {
    const auto n = static_cast<std::size_t>(shape[d]);
    at[d] = flat % n;
    flat /= n;
  }
  std::string s = "(";
  for (std::size_t d = 0; d < at.size(); ++d) s += (d ? ", " : "") + std::to_string(at[d]);
  return s + ")";
}

// Maps every element of an array of T (any shape, any strides) into `out`
// in C order. Returns the flat index of the first score that is neither
// admissible nor (with `nan_is_missing`) NaN, which then stops the mapping.
template <class T>
std::optional<std::size_t> map_strided(const plumb::CalibrationMap& map, const char* base,
                                       const std::vector<py::ssize_t>& shape, const std::vector<py::ssize_t>& strides,
                                       double* out, bool nan_is_missing) {
  const plumb::Scale scale = map.scale();
  const std::size_t ndim = shape.size();
  std::size_t total = 1;
  for (py::ssize_t n : shape) total *= static_cast<std::size_t>(n);
  if (total == 0) return std::nullopt;
  const py::ssize_t inner = ndim == 0 ? 1 : shape[ndim - 1];
  const py::ssize_t step = ndim == 0 ? 0 : strides[ndim - 1];
  std::vector<py::ssize_t> index(ndim > 0 ? ndim - 1 : 0, 0);
  std::size_t flat = 0;
  while (flat < total) {
    const char* row = base;
    for (std::size_t d = 0; d + 1 < ndim; ++d) row += index[d] * strides[d];
    for (py::ssize_t i = 0; i < inner; ++i, ++flat) {
      T raw;
      std::memcpy(&raw, row + i * step, sizeof raw);
      const auto s = static_cast<double>(raw);
      if (plumb::embed::admissible(s, scale)) {
        out[flat] = map.map(s).probability;
      } else if (nan_is_missing && std::isnan(s)) {
        out[flat] = s;
      } else {
        return flat;
      }
    }
    for (std::size_t d = index.size(); d-- > 0;) {
      if (++index[d] < shape[d]) break;
      index[d] = 0;
    }
  }
  return std::nullopt;
}

struct Map {
  std::shared_ptr<const plumb::Artifact> artifact;

  const plumb::CalibrationMap& map() const { return *artifact->map; }

  py::object call(py::handle scores, const std::string& missing, py::handle out_in) const {
    if (missing != "refuse" && missing != "empty")
      throw usage("unknown missing policy", missing, "refuse (NaN is an error) or empty (NaN maps to NaN)");
    const bool nan_is_missing = missing == "empty";
    const plumb::Scale scale = map().scale();
    // A Python number gives a Python float.
    if (py::isinstance<py::float_>(scores) ||
        (py::isinstance<py::int_>(scores) && !py::isinstance<py::bool_>(scores))) {
      const double s = scores.cast<double>();
      if (plumb::embed::admissible(s, scale)) return py::float_(map().map(s).probability);
      if (nan_is_missing && std::isnan(s)) return py::float_(s);
      throw plumb::embed::score_refusal("index 0", s, scale);
    }
    py::array a;
    if (py::isinstance<py::array>(scores)) {
      a = py::reinterpret_borrow<py::array>(scores);
    } else {
      a = py::array::ensure(scores);
      if (!a) throw py::error_already_set();
    }
    const char kind = a.dtype().kind();
    if (kind != 'f' && kind != 'i' && kind != 'u' && kind != 'b')
      throw py::type_error("plumb: scores must be an array of floating-point numbers, got dtype " +
                           py::str(a.dtype()).cast<std::string>());
    // The element types read in place; any other (float16, integers, a
    // byte order not the machine's) is converted to float64 first.
    const char order = a.dtype().byteorder();
    const bool native =
        order == '=' || order == '|' || order == (std::endian::native == std::endian::little ? '<' : '>');
    const bool in_place =
        kind == 'f' && native &&
        (a.itemsize() == sizeof(double) || a.itemsize() == sizeof(float) || a.itemsize() == sizeof(long double));
    if (!in_place) a = py::array_t<double, py::array::forcecast>::ensure(a);
    if (!a) throw py::error_already_set();

    const std::vector<py::ssize_t> shape(a.shape(), a.shape() + a.ndim());
    const std::vector<py::ssize_t> strides(a.strides(), a.strides() + a.ndim());
    py::array_t<double> out;
    if (out_in.is_none()) {
      out = py::array_t<double>(shape);
    } else {
      // A caller's buffer: float64, C order, writable, of the scores' shape.
      const bool fits = py::isinstance<py::array_t<double>>(out_in) &&
                        py::reinterpret_borrow<py::array>(out_in).dtype().is(py::dtype::of<double>());
      if (fits) out = py::reinterpret_borrow<py::array_t<double>>(out_in);
      if (!fits || !(out.flags() & py::array::c_style) || !out.writeable() ||
          !std::equal(shape.begin(), shape.end(), out.shape(), out.shape() + out.ndim()) ||
          static_cast<std::size_t>(out.ndim()) != shape.size())
        throw usage("out is not a writable float64 array in C order of the scores' shape",
                    py::str(py::repr(out_in)).cast<std::string>().substr(0, 80),
                    "an array like numpy.empty(scores.shape)");
      if (shape.empty()) throw usage("out is given for a single score", {}, "out for an array of scores");
    }
    double* o = out.mutable_data();
    const char* base = static_cast<const char*>(a.data());
    const std::size_t size = a.itemsize();
    std::optional<std::size_t> bad;
    {
      py::gil_scoped_release unlocked;
      if (size == sizeof(double))
        bad = map_strided<double>(map(), base, shape, strides, o, nan_is_missing);
      else if (size == sizeof(float))
        bad = map_strided<float>(map(), base, shape, strides, o, nan_is_missing);
      else
        bad = map_strided<long double>(map(), base, shape, strides, o, nan_is_missing);
    }
    if (bad) {
      std::vector<py::ssize_t> at(shape.size(), 0);
      double s = 0.0;
      {
        // The offending element, read again from its position.
        std::size_t flat = *bad;
        const char* p = base;
        for (std::size_t d = shape.size(); d-- > 0;) {
          const auto n = static_cast<std::size_t>(shape[d]);
          p += static_cast<py::ssize_t>(flat % n) * strides[d];
          flat /= n;
        }
        if (size == sizeof(double)) {
          std::memcpy(&s, p, sizeof s);
        } else if (size == sizeof(float)) {
          float f;
          std::memcpy(&f, p, sizeof f);
          s = f;
        } else {
          long double l;
          std::memcpy(&l, p, sizeof l);
          s = static_cast<double>(l);
        }
      }
      throw plumb::embed::score_refusal(position(*bad, shape), s, scale);
    }
    if (shape.empty()) return py::float_(o[0]);
    return out;
  }

  void save(const std::string& path) const {
    plumb::io::OutputFile out(path);
    out.write(plumb::artifact_to_text(*artifact));
    out.commit();
  }

  json document() const { return plumb::artifact_to_json(*artifact); }
};

// Maps rows x K scores of T (any strides) into `out` (rows x K, C order),
// each row read into a row buffer of doubles (no copy of the array), checked
// as apply checks it, then mapped. Returns the first refused row with its
// problem, which then stops the mapping.
struct RowRefusal {
  std::size_t row;
  plumb::io::ClassRowProblem problem;
  double value;
};
template <class T>
std::optional<RowRefusal> map_class_strided(const plumb::ClassCalibrationMap& map, double sum_tolerance,
                                            const char* base, std::size_t rows, py::ssize_t row_stride,
                                            py::ssize_t class_stride, double* out) {
  const std::size_t k = map.k();
  std::vector<double> in(k);
  for (std::size_t r = 0; r < rows; ++r) {
    const char* row = base + static_cast<py::ssize_t>(r) * row_stride;
    for (std::size_t j = 0; j < k; ++j) {
      T raw;
      std::memcpy(&raw, row + static_cast<py::ssize_t>(j) * class_stride, sizeof raw);
      in[j] = static_cast<double>(raw);
    }
    if (auto p = plumb::io::class_row_problem(in.data(), k, map.scale(), sum_tolerance, "the artifact's sum tolerance",
                                              "the map's scale is " + std::string(plumb::to_string(map.scale()))))
      return RowRefusal{r, std::move(*p), in[p->column]};
    map.map(in.data(), out + r * k);
  }
  return std::nullopt;
}

struct ClassMap {
  std::shared_ptr<const plumb::ClassArtifact> artifact;
  double sum_tolerance = plumb::io::default_sum_tolerance;

  const plumb::ClassCalibrationMap& map() const { return *artifact->map; }

  py::object call(py::handle scores, py::handle out_in) const {
    const std::size_t k = map().k();
    py::array a;
    if (py::isinstance<py::array>(scores)) {
      a = py::reinterpret_borrow<py::array>(scores);
    } else {
      a = py::array::ensure(scores);
      if (!a) throw py::error_already_set();
    }
    const char kind = a.dtype().kind();
    if (kind != 'f' && kind != 'i' && kind != 'u' && kind != 'b')
      throw py::type_error("plumb: scores must be an array of floating-point numbers, got dtype " +
                           py::str(a.dtype()).cast<std::string>());
    const char order = a.dtype().byteorder();
    const bool native =
        order == '=' || order == '|' || order == (std::endian::native == std::endian::little ? '<' : '>');
    const bool in_place =
        kind == 'f' && native &&
        (a.itemsize() == sizeof(double) || a.itemsize() == sizeof(float) || a.itemsize() == sizeof(long double));
    if (!in_place) a = py::array_t<double, py::array::forcecast>::ensure(a);
    if (!a) throw py::error_already_set();
    const bool one_row = a.ndim() == 1;
    if (!(a.ndim() == 2 || one_row) || a.shape(a.ndim() - 1) != static_cast<py::ssize_t>(k))
      throw usage("the scores are not an array of rows of " + std::to_string(k) + " classes",
                  "shape " + py::str(py::object(a.attr("shape"))).cast<std::string>(),
                  "shape (rows, " + std::to_string(k) + "), one column per class in the map's order");
    const std::size_t rows = one_row ? 1 : static_cast<std::size_t>(a.shape(0));
    const py::ssize_t row_stride = one_row ? 0 : a.strides(0);
    const py::ssize_t class_stride = a.strides(a.ndim() - 1);
    const std::vector<py::ssize_t> shape(a.shape(), a.shape() + a.ndim());
    py::array_t<double> out;
    if (out_in.is_none()) {
      out = py::array_t<double>(shape);
    } else {
      const bool fits = py::isinstance<py::array_t<double>>(out_in) &&
                        py::reinterpret_borrow<py::array>(out_in).dtype().is(py::dtype::of<double>());
      if (fits) out = py::reinterpret_borrow<py::array_t<double>>(out_in);
      if (!fits || !(out.flags() & py::array::c_style) || !out.writeable() ||
          static_cast<std::size_t>(out.ndim()) != shape.size() ||
          !std::equal(shape.begin(), shape.end(), out.shape(), out.shape() + out.ndim()))
        throw usage("out is not a writable float64 array in C order of the scores' shape",
                    py::str(py::repr(out_in)).cast<std::string>().substr(0, 80),
                    "an array like numpy.empty(scores.shape)");
    }
    double* o = out.mutable_data();
    const char* base = static_cast<const char*>(a.data());
    const std::size_t size = a.itemsize();
    std::optional<RowRefusal> bad;
    {
      py::gil_scoped_release unlocked;
      if (size == sizeof(double))
        bad = map_class_strided<double>(map(), sum_tolerance, base, rows, row_stride, class_stride, o);
      else if (size == sizeof(float))
        bad = map_class_strided<float>(map(), sum_tolerance, base, rows, row_stride, class_stride, o);
      else
        bad = map_class_strided<long double>(map(), sum_tolerance, base, rows, row_stride, class_stride, o);
    }
    if (bad) {
      const std::string row = "row " + std::to_string(bad->row);
      if (bad->problem.message.rfind("the row's", 0) == 0)  // the sum: no one value to show
        throw plumb::Error(plumb::ErrorKind::input, row + ": " + bad->problem.message, {}, {}, bad->problem.expected);
      char text[32];
      const auto end = std::to_chars(text, text + sizeof text, bad->value).ptr;
      throw plumb::Error(plumb::ErrorKind::input,
                         row + ", class '" + map().classes()[bad->problem.column] + "': " + bad->problem.message, {},
                         std::string(text, end), bad->problem.expected);
    }
    return out;
  }

  json document() const { return plumb::class_artifact_to_json(*artifact); }
};

// A 1-D float64 copy of `values` (any shape, flattened in C order).
std::vector<double> as_doubles(py::handle values, const char* what) {
  auto a = py::array_t<double, py::array::forcecast | py::array::c_style>::ensure(values);
  if (!a) {
    PyErr_Clear();
    throw usage(std::string(what) + " must be an array of numbers", py::str(py::type::of(values)).cast<std::string>(),
                "a NumPy array or a sequence of numbers");
  }
  return std::vector<double>(a.data(), a.data() + a.size());
}

void check_lengths(std::size_t n, std::size_t m, const char* what) {
  if (n != m)
    throw usage(std::string(what) + " and scores differ in length", std::to_string(m),
                std::to_string(n) + " values, one per score");
}

void check_labels(const std::vector<double>& label) {
  for (std::size_t i = 0; i < label.size(); ++i)
    if (label[i] != 0.0 && label[i] != 1.0) {
      char text[32];
      const auto end = std::to_chars(text, text + sizeof text, label[i]).ptr;
      throw plumb::Error(plumb::ErrorKind::input, "the label at index " + std::to_string(i) + " is neither 0 nor 1", {},
                         std::string(text, end), "1/0 or true/false");
    }
}

void check_weights(const std::vector<double>& weight) {
  for (std::size_t i = 0; i < weight.size(); ++i)
    if (!std::isfinite(weight[i]) || weight[i] < 0.0) {
      char text[32];
      const auto end = std::to_chars(text, text + sizeof text, weight[i]).ptr;
      throw plumb::Error(plumb::ErrorKind::input,
                         "the weight at index " + std::to_string(i) + " is not a finite number >= 0", {},
                         std::string(text, end), "a finite number >= 0");
    }
}

plumb::Scale scale_named(const std::string& name) {
  const std::optional<plumb::Scale> s = plumb::parse_scale(name);
  if (!s) throw usage("unknown scale", name, "probability, logit or margin");
  return *s;
}

Map fit(py::handle scores_in, py::handle labels_in, const std::string& kind, py::handle weights_in,
        const std::string& scale_name, const std::string& between_blocks, const std::string& platt_targets,
        const std::string& beta_form, int bins, const std::string& increase, int venn_folds,
        const std::string& score_column,
        const std::string& label_column,
        const std::optional<std::string>& weight_column, const std::string& source,
        const std::optional<std::string>& source_sha256, bool timestamp) {
  const plumb::Scale scale = scale_named(scale_name);
  const auto kinds = plumb::map_kinds();
  if (std::find(kinds.begin(), kinds.end(), kind) == kinds.end()) {
    std::string names;
    for (std::string_view k : kinds) names += (names.empty() ? "" : ", ") + std::string(k);
    throw usage("unknown kind of map", kind, names);
  }
  if (!plumb::accepts_scale(kind, scale))
    throw usage("the " + kind + " map does not accept scores on the " + scale_name + " scale", scale_name,
                kind == "beta" ? "scale='probability'" : "scale='probability' or 'logit'");
  if (between_blocks != "linear" && between_blocks != "step")
    throw usage("unknown between_blocks", between_blocks, "linear or step");
  if (platt_targets != "smoothed" && platt_targets != "labels")
    throw usage("unknown platt_targets", platt_targets, "smoothed or labels");
  if (beta_form != "full" && beta_form != "midpoint" && beta_form != "shared")
    throw usage("unknown beta_form", beta_form, "full, midpoint or shared");
  if (bins < 1 || bins > 1000000) throw usage("bins out of range", std::to_string(bins), "1 to 1000000");
  if (increase != "weak" && increase != "strict") throw usage("unknown increase", increase, "weak or strict");
  if (venn_folds < 2 || venn_folds > 20) throw usage("venn_folds out of range", std::to_string(venn_folds), "2 to 20");

  const std::vector<double> score = as_doubles(scores_in, "scores");
  const std::vector<double> label = as_doubles(labels_in, "labels");
  check_lengths(score.size(), label.size(), "labels");
  std::vector<double> weight;
  if (!weights_in.is_none()) {
    weight = as_doubles(weights_in, "weights");
    check_lengths(score.size(), weight.size(), "weights");
  }
  if (score.empty()) throw plumb::Error(plumb::ErrorKind::input, "no rows", {}, {}, "at least one labelled row");
  for (std::size_t i = 0; i < score.size(); ++i)
    if (!plumb::embed::admissible(score[i], scale))
      throw plumb::embed::score_refusal("index " + std::to_string(i), score[i], scale);
  check_labels(label);
  check_weights(weight);

  plumb::MapOptions options;
  options.isotonic_interpolate = between_blocks == "linear";
  options.platt_smoothed_targets = platt_targets == "smoothed";
  options.beta_form = beta_form;
  options.histogram_bins = bins;
  options.centered_strict = increase == "strict";
  options.venn_folds = venn_folds;

  auto artifact = std::make_shared<plumb::Artifact>();
  {
    py::gil_scoped_release unlocked;
    artifact->map = plumb::fit_map(kind, plumb::FitData{score, label, weight, scale}, options);
  }
  artifact->score_column = score_column;
  // What `plumb fit` records for these options, from the map registry.
  artifact->fit_options = plumb::recorded_options(*plumb::find_map_kind(kind), options);

  // The provenance `plumb fit` records for the same rows read from a file:
  // rows, weights and the score range summed and found in row order as the
  // reader does. The source and its SHA-256 are the caller's to give (a
  // file name and the hash of its bytes, for an artifact byte-identical to
  // the CLI's); by default "<array>" and the SHA-256 of the rows as float64
  // bytes: the scores, then the labels, then the weights when given.
  plumb::Provenance& p = artifact->provenance;
  p.source = source;
  if (source_sha256) {
    p.source_sha256 = *source_sha256;
  } else {
    std::string bytes;
    const auto add = [&bytes](const std::vector<double>& v) {
      bytes.append(reinterpret_cast<const char*>(v.data()), v.size() * sizeof(double));
    };
    add(score);
    add(label);
    add(weight);
    p.source_sha256 = plumb::io::sha256_hex(bytes);
  }
  p.rows = score.size();
  for (std::size_t i = 0; i < score.size(); ++i) {
    const double w = weight.empty() ? 1.0 : weight[i];
    p.positives += w * label[i];
    p.weight_total += w;
  }
  p.label_column = label_column;
  p.weight_column = weight.empty() ? std::string() : weight_column.value_or("weight");
  p.positive_rule = "1/0 or true/false";
  const auto [lo, hi] = std::minmax_element(score.begin(), score.end());
  p.score_min = *lo;
  p.score_max = *hi;
  p.tool = std::string("plumb ") + plumb::version_string;
  p.created_utc = timestamp ? plumb::utc_now() : std::string();
  // plumb fit's drift reference (unweighted rows, the default grid), so the
  // artifact is the CLI's byte for byte; none when the scores span more
  // cells than a reference holds, as fit.
  if (weight.empty()) {
    try {
      plumb::GridCounter counter(scale, plumb::default_reference_grid, true);
      for (std::size_t i = 0; i < score.size(); ++i) counter.add(score[i], label[i] > 0.5);
      artifact->reference = counter.finish();
    } catch (const plumb::Error& e) {
      if (e.kind() != plumb::ErrorKind::input) throw;
    }
  }
  warn_like_fit(*artifact->map, kind, p.weight_total);
  return Map{artifact};
}

py::dict report(py::handle forecasts_in, py::handle labels_in, py::handle weights_in, std::size_t bins,
                const std::string& binning, std::size_t bootstrap, std::uint64_t seed, double confidence,
                std::size_t hl_groups, std::size_t threads, const std::string& label_column,
                const std::optional<std::string>& weight_column, const std::string& source) {
  // One array (named "forecast") or a dict of name -> array, in its order.
  std::vector<std::string> names;
  std::vector<std::vector<double>> values;
  if (py::isinstance<py::dict>(forecasts_in)) {
    for (auto item : py::reinterpret_borrow<py::dict>(forecasts_in)) {
      names.push_back(py::str(item.first).cast<std::string>());
      values.push_back(as_doubles(item.second, "forecasts"));
    }
  } else {
    names.emplace_back("forecast");
    values.push_back(as_doubles(forecasts_in, "forecasts"));
  }
  if (names.empty()) throw usage("no forecast columns", {}, "an array, or a dict of name to array");
  const std::vector<double> label = as_doubles(labels_in, "labels");
  std::vector<double> weight;
  if (!weights_in.is_none()) weight = as_doubles(weights_in, "weights");
  for (std::size_t k = 0; k < values.size(); ++k) {
    check_lengths(label.size(), values[k].size(), "forecasts");
    for (std::size_t i = 0; i < values[k].size(); ++i)
      if (!plumb::embed::admissible(values[k][i], plumb::Scale::probability))
        throw plumb::embed::score_refusal("index " + std::to_string(i) + " of '" + names[k] + "'", values[k][i],
                                          plumb::Scale::probability);
  }
  if (!weight.empty()) check_lengths(label.size(), weight.size(), "weights");
  if (label.empty()) throw plumb::Error(plumb::ErrorKind::input, "no rows", {}, {}, "at least one labelled row");
  check_labels(label);
  check_weights(weight);

  plumb::ReportOptions ro;
  if (binning == "equal_width")
    ro.binning = plumb::BinningKind::equal_width;
  else if (binning == "equal_mass")
    ro.binning = plumb::BinningKind::equal_mass;
  else
    throw usage("unknown binning", binning, "equal_width or equal_mass");
  if (bins < 1) throw usage("bins out of range", std::to_string(bins), "1 or more");
  if (!(confidence > 0.0 && confidence < 1.0))
    throw usage("confidence out of range", std::to_string(confidence), "a level strictly between 0 and 1");
  if (hl_groups < 2) throw usage("hl_groups out of range", std::to_string(hl_groups), "2 or more");
  ro.bins = bins;
  ro.bootstrap = bootstrap;
  ro.seed = seed;
  ro.confidence = confidence;
  ro.hl_groups = hl_groups;
  ro.threads = threads;

  std::vector<plumb::ForecastColumn> columns;
  for (std::size_t k = 0; k < names.size(); ++k) columns.push_back({names[k], values[k]});
  json doc;
  {
    py::gil_scoped_release unlocked;
    plumb::Report r = plumb::build_report(columns, label, weight, {}, {}, {}, ro);
    r.source = source;
    r.label_column = label_column;
    r.weight_column = weight.empty() ? std::string() : weight_column.value_or("weight");
    doc = plumb::report_to_json(r);
  }
  return py::reinterpret_borrow<py::dict>(to_python(doc));
}

}  // namespace

PYBIND11_MODULE(plumb, m) {
  m.doc() =
      "plumb: probability recalibration maps. load_map(path) reads a map artifact whose call maps scores with "
      "the numbers `plumb apply` writes; fit(...) fits one on arrays; report(...) gives the report's figures.";
  m.attr("__version__") = plumb::version_string;

  static py::exception<plumb::Error> error(m, "Error");
  error.doc() =
      "A refusal from plumb, carrying plumb's one-line message; .kind names the category (usage, input, "
      "artifact, io, fit, internal) and .exit_code the code `plumb` exits with for it.";
  error_type = error.ptr();
  fit_warning_type = PyErr_NewExceptionWithDoc(
      "plumb.FitWarning",
      "A caution about a fitted map (plumb fit prints the same on its standard error): few rows, a map that "
      "decreases or reaches 0 or 1, a fit that did not converge.",
      PyExc_UserWarning, nullptr);
  if (fit_warning_type == nullptr) throw py::error_already_set();
  m.attr("FitWarning") = py::reinterpret_borrow<py::object>(fit_warning_type);
  py::register_exception_translator([](std::exception_ptr p) {
    try {
      if (p) std::rethrow_exception(p);
    } catch (const plumb::Error& e) {
      py::object instance = py::reinterpret_borrow<py::object>(error_type)(plumb::format_error(e));
      instance.attr("kind") = kind_name(e.kind());
      instance.attr("exit_code") = e.exit_code();
      PyErr_SetObject(error_type, instance.ptr());
    }
  });

  py::class_<Map>(m, "Map",
                  "A map artifact, loaded or fitted. Call it on scores: a NumPy array of any float dtype and any "
                  "shape gives a float64 array of the same shape (read in place, without a copy, for float32, "
                  "float64 and longdouble in the machine's byte order; the GIL is released while mapping); a "
                  "Python number gives a float.")
      .def("__call__", &Map::call, py::arg("scores"), py::arg("missing") = "refuse", py::arg("out") = py::none(),
           "The probability of each score, exactly as `plumb apply` writes it. A score that is not valid on the "
           "map's scale raises plumb.Error naming its position; missing='empty' maps NaN to NaN instead. With "
           "out (a float64 array in C order of the scores' shape) the probabilities are written there and out "
           "is returned, so that repeated calls allocate nothing.")
      .def_property_readonly("kind", [](const Map& self) { return std::string(self.map().kind()); })
      .def_property_readonly("scale", [](const Map& self) { return std::string(plumb::to_string(self.map().scale())); })
      .def_property_readonly("score_column", [](const Map& self) { return self.artifact->score_column; })
      .def_property_readonly("parameters", [](const Map& self) { return to_python(self.map().parameters()); })
      .def_property_readonly("provenance", [](const Map& self) { return to_python(self.document()["provenance"]); })
      .def_property_readonly(
          "fit", [](const Map& self) { return to_python(self.document()["fit"]); },
          "The fit's diagnostics and options, as the artifact records them.")
      .def_property_readonly("cross_fit", [](const Map& self) { return to_python(self.artifact->cross_fit); })
      .def("save", &Map::save, py::arg("path"),
           "Write the artifact to `path`, whole or not at all (the bytes `plumb fit` writes for the same rows, "
           "names and source).")
      .def(
          "text", [](const Map& self) { return plumb::artifact_to_text(*self.artifact); },
          "The artifact's JSON text, as save() writes it.")
      .def("__repr__", [](const Map& self) {
        return "<plumb.Map " + std::string(self.map().kind()) + " on " +
               std::string(plumb::to_string(self.map().scale())) + " scores of '" + self.artifact->score_column + "'>";
      });

  m.def(
      "load_map",
      [](const std::string& path) {
        auto a = std::make_shared<plumb::Artifact>(plumb::load_artifact(path));
        return Map{std::move(a)};
      },
      py::arg("path"),
      "Load and validate a map artifact (the checks `plumb apply` makes); plumb.Error when it is not one.");

  py::class_<ClassMap>(m, "ClassMap",
                       "A multi-class map artifact (temperature, vector, dirichlet, one_vs_rest). Call it on an "
                       "array of shape (rows, K), one column per class in the map's order (classes), of any float "
                       "dtype: it gives a float64 array of the same shape (read in place, without a copy, for "
                       "float32, float64 and longdouble in the machine's byte order; the GIL is released while "
                       "mapping). A 1-D array of K scores is one row.")
      .def("__call__", &ClassMap::call, py::arg("scores"), py::arg("out") = py::none(),
           "The K probabilities of each row, exactly as `plumb apply --scores` writes them. A row apply refuses "
           "(a logit not finite; a probability outside [0, 1] or NaN, or a row whose sum misses 1 by more than "
           "the artifact's sum tolerance) raises plumb.Error naming the row and class. With out (a float64 array "
           "in C order of the scores' shape, which may be the scores themselves) the probabilities are written "
           "there and out is returned.")
      .def_property_readonly("kind", [](const ClassMap& self) { return std::string(self.map().kind()); })
      .def_property_readonly("scale",
                             [](const ClassMap& self) { return std::string(plumb::to_string(self.map().scale())); })
      .def_property_readonly("classes", [](const ClassMap& self) { return self.map().classes(); })
      .def_property_readonly("score_columns", [](const ClassMap& self) { return self.artifact->score_columns; })
      .def_property_readonly("parameters", [](const ClassMap& self) { return to_python(self.map().parameters()); })
      .def_property_readonly("provenance",
                             [](const ClassMap& self) { return to_python(self.document()["provenance"]); })
      .def_property_readonly(
          "fit", [](const ClassMap& self) { return to_python(self.document()["fit"]); },
          "The fit's diagnostics and options, as the artifact records them.")
      .def(
          "text", [](const ClassMap& self) { return plumb::class_artifact_to_text(*self.artifact); },
          "The artifact's JSON text.")
      .def("__repr__", [](const ClassMap& self) {
        return "<plumb.ClassMap " + std::string(self.map().kind()) + " on " +
               std::string(plumb::to_string(self.map().scale())) + " scores of " + std::to_string(self.map().k()) +
               " classes>";
      });

  m.def(
      "load_class_map",
      [](const std::string& path) {
        auto a = std::make_shared<plumb::ClassArtifact>(plumb::embed::load_class_artifact(path));
        const double tolerance = plumb::embed::class_sum_tolerance(*a);
        return ClassMap{std::move(a), tolerance};
      },
      py::arg("path"),
      "Load and validate a multi-class map artifact (format version 4, written by plumb fit --scores or "
      "cross-fit --scores); plumb.Error when it is not one (load_map reads a binary map).");

  m.def("fit", &fit, py::arg("scores"), py::arg("labels"), py::arg("kind"), py::arg("weights") = py::none(),
        py::kw_only(), py::arg("scale") = "probability", py::arg("between_blocks") = "linear",
        py::arg("platt_targets") = "smoothed", py::arg("beta_form") = "full", py::arg("bins") = 10,
        py::arg("increase") = "weak", py::arg("venn_folds") = 5, py::arg("score_column") = "score", py::arg("label_column") = "label", py::arg("weight_column") = py::none(),
        py::arg("source") = "<array>", py::arg("source_sha256") = py::none(), py::arg("timestamp") = true,
        "Fit a map of `kind` (isotonic, centered_isotonic, platt, beta, temperature, histogram, venn_abers, "
        "cross_venn_abers) on scores and 0/1 labels, with "
        "optional weights >= 0, as `plumb fit` does. The keywords after weights are fit's options and what the "
        "artifact records about the rows: given the file's name as source, the SHA-256 of its bytes, its column "
        "names and timestamp=False, save() writes the bytes of `plumb fit --no-timestamp`.");

  m.def("report", &report, py::arg("forecasts"), py::arg("labels"), py::arg("weights") = py::none(), py::kw_only(),
        py::arg("bins") = 10, py::arg("binning") = "equal_width", py::arg("bootstrap") = 200, py::arg("seed") = 1,
        py::arg("confidence") = 0.95, py::arg("hl_groups") = 10, py::arg("threads") = 0,
        py::arg("label_column") = "label", py::arg("weight_column") = py::none(), py::arg("source") = "<array>",
        "The report's figures as a dict (the document `plumb report --json` writes, docs/report-format.md) for "
        "one forecast array, or a dict of name -> array, against 0/1 labels and optional weights.");
}
