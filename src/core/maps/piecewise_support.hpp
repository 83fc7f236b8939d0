#pragma once
// The artifact form shared by the piecewise maps (isotonic blocks,
// histogram bins): four parallel arrays <prefix>_score_lo, _score_hi,
// _value and _weight, one entry per piece in increasing score order.
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "core/json_fields.hpp"
#include "plumb/scale.hpp"

namespace plumb::piecewise {

// Piece has members score_lo, score_hi, value, weight.
template <class Piece>
void write_pieces(nlohmann::json& out, const std::string& prefix, const std::vector<Piece>& pieces) {
  nlohmann::json lo = nlohmann::json::array(), hi = nlohmann::json::array(), value = nlohmann::json::array(),
                 weight = nlohmann::json::array();
  for (const Piece& p : pieces) {
    lo.push_back(p.score_lo);
    hi.push_back(p.score_hi);
    value.push_back(p.value);
    weight.push_back(p.weight);
  }
  out[prefix + "_score_lo"] = std::move(lo);
  out[prefix + "_score_hi"] = std::move(hi);
  out[prefix + "_value"] = std::move(value);
  out[prefix + "_weight"] = std::move(weight);
}

// Reads and validates the arrays: at least one piece, equal lengths, finite
// numbers, lo <= hi, pieces disjoint and increasing, values in [0, 1],
// weights > 0, scores in [0, 1] on the probability scale and, when
// `non_decreasing`, values that never fall. `noun` ("block", "bin") goes in
// messages. Throws plumb::Error(artifact).
template <class Piece>
std::vector<Piece> read_pieces(const nlohmann::json& p, const std::string& prefix, const std::string& noun,
                               Scale scale, bool non_decreasing, const std::string& where) {
  namespace jf = json_fields;
  const std::string at_lo = "parameters." + prefix + "_score_lo", at_hi = "parameters." + prefix + "_score_hi",
                    at_value = "parameters." + prefix + "_value", at_weight = "parameters." + prefix + "_weight";
  const auto lo = jf::require_finite_array(p, prefix + "_score_lo", where, at_lo);
  const auto hi = jf::require_finite_array(p, prefix + "_score_hi", where, at_hi);
  const auto value = jf::require_finite_array(p, prefix + "_value", where, at_value);
  const auto weight = jf::require_finite_array(p, prefix + "_weight", where, at_weight);
  if (lo.empty()) jf::fail(where, at_lo, "is empty", "at least one " + noun);
  if (hi.size() != lo.size() || value.size() != lo.size() || weight.size() != lo.size())
    jf::fail(where, "parameters", "has " + noun + " arrays of different lengths", "equal lengths");
  std::vector<Piece> pieces(lo.size());
  for (std::size_t i = 0; i < lo.size(); ++i) {
    const std::string at = "[" + std::to_string(i) + "]";
    if (!(lo[i] <= hi[i])) jf::fail(where, at_hi + at, "is below its " + noun + "'s low end");
    if (i > 0 && !(lo[i] > hi[i - 1]))
      jf::fail(where, at_lo + at, "does not lie above the previous " + noun, noun + "s in increasing score order");
    if (!(value[i] >= 0.0 && value[i] <= 1.0)) jf::fail(where, at_value + at, "lies outside [0, 1]", "a probability");
    if (non_decreasing && i > 0 && !(value[i] >= value[i - 1]))
      jf::fail(where, at_value + at, "is below the previous " + noun + "'s value", "non-decreasing knots");
    if (!(weight[i] > 0.0)) jf::fail(where, at_weight + at, "is not positive");
    if (scale == Scale::probability && lo[i] < 0.0)
      jf::fail(where, at_lo + at, "lies outside [0, 1] on the probability scale");
    if (scale == Scale::probability && hi[i] > 1.0)
      jf::fail(where, at_hi + at, "lies outside [0, 1] on the probability scale");
    pieces[i].score_lo = lo[i];
    pieces[i].score_hi = hi[i];
    pieces[i].value = value[i];
    pieces[i].weight = weight[i];
  }
  return pieces;
}

}  // namespace plumb::piecewise
