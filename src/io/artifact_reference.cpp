#include "io/artifact_reference.hpp"

#include <cmath>

#include "core/json_fields.hpp"

namespace plumb::io {

namespace jf = json_fields;
using nlohmann::json;

json drift_reference_json(const GridCells& g) {
  json doc = {{"grid_step", g.step}, {"index", g.index}, {"count", g.count}, {"positive", g.positive}};
  if (g.scale == Scale::probability) {
    doc["at_zero"] = json::array({g.zero_count, g.zero_positive});
    doc["at_one"] = json::array({g.one_count, g.one_positive});
  }
  return doc;
}

namespace {

std::vector<std::uint64_t> counts(const json& ref, const char* key, const std::string& where) {
  const std::string path = std::string(drift_reference_key) + "." + key;
  const json& a = jf::require(ref, key, where, path);
  if (!a.is_array()) jf::fail(where, path, "is not an array", "an array of counts");
  std::vector<std::uint64_t> out;
  out.reserve(a.size());
  for (const json& v : a) {
    if (!v.is_number_unsigned() && !(v.is_number_integer() && v.get<std::int64_t>() >= 0))
      jf::fail(where, path, "holds a value that is not a count", "whole numbers >= 0");
    out.push_back(v.get<std::uint64_t>());
  }
  return out;
}

void end_cell(const json& ref, const char* key, const std::string& where, std::uint64_t& count,
              std::uint64_t& positive) {
  const std::string path = std::string(drift_reference_key) + "." + key;
  const std::vector<std::uint64_t> pair = counts(ref, key, where);
  if (pair.size() != 2) jf::fail(where, path, "does not hold two numbers", "[count, positive]");
  if (pair[1] > pair[0]) jf::fail(where, path, "has more positives than rows", "positive <= count");
  count = pair[0];
  positive = pair[1];
}

}  // namespace

GridCells read_drift_reference(const json& doc, Scale scale, const std::string& where) {
  const json& ref = jf::require(doc, drift_reference_key, where, drift_reference_key);
  if (!ref.is_object()) jf::fail(where, drift_reference_key, "is not an object", "the reference written by plumb fit");
  const std::string base(drift_reference_key);
  GridCells g;
  g.scale = scale;
  g.labelled = true;
  g.step = jf::require_finite(ref, "grid_step", where, base + ".grid_step");
  if (!(g.step > 0.0)) jf::fail(where, base + ".grid_step", "is not positive", "a grid step > 0");
  const json& index = jf::require(ref, "index", where, base + ".index");
  if (!index.is_array()) jf::fail(where, base + ".index", "is not an array", "an array of whole numbers");
  for (const json& v : index) {
    if (!v.is_number_integer()) jf::fail(where, base + ".index", "holds a value that is not a whole number", "whole numbers");
    const std::int64_t k = v.get<std::int64_t>();
    if (k < -(std::int64_t{1} << 52) || k > (std::int64_t{1} << 52))
      jf::fail(where, base + ".index", "holds a cell beyond 2^52", "cells within +-2^52");
    if (!g.index.empty() && k <= g.index.back())
      jf::fail(where, base + ".index", "is not strictly ascending", "cells in ascending order, each once");
    g.index.push_back(k);
  }
  g.count = counts(ref, "count", where);
  g.positive = counts(ref, "positive", where);
  if (g.count.size() != g.index.size() || g.positive.size() != g.index.size())
    jf::fail(where, base, "has arrays of different lengths", "index, count and positive of one length");
  for (std::size_t i = 0; i < g.count.size(); ++i) {
    if (g.count[i] == 0) jf::fail(where, base + ".count", "holds a cell of no rows", "counts >= 1");
    if (g.positive[i] > g.count[i]) jf::fail(where, base + ".positive", "holds more positives than rows", "positive <= count");
  }
  const bool ends = ref.contains("at_zero") || ref.contains("at_one");
  if (scale == Scale::probability) {
    end_cell(ref, "at_zero", where, g.zero_count, g.zero_positive);
    end_cell(ref, "at_one", where, g.one_count, g.one_positive);
  } else if (ends) {
    jf::fail(where, base, "has at_zero or at_one for scores that are not probabilities",
             "at_zero and at_one on the probability scale only");
  }
  if (g.rows() == 0) jf::fail(where, base, "holds no rows", "the fit rows' counts");
  return g;
}

}  // namespace plumb::io
