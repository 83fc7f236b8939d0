// Several multi-class models side by side (class_report.hpp): the rows as a
// map calibrates them, and the set's gate summary. Kept apart from
// class_report.cpp, whose bootstrap is tuned on its own.
#include <algorithm>
#include <string>
#include <vector>

#include "plumb/class_report.hpp"
#include "plumb/error.hpp"

namespace plumb {

ClassScores calibrate_class_scores(const ClassCalibrationMap& map, const ClassScores& s, std::uint64_t* floored) {
  const std::size_t K = s.k();
  if (map.classes() != s.classes || map.scale() != s.scale || s.values.size() != s.rows * K)
    throw Error(ErrorKind::internal, "calibrate_class_scores: the map's classes or scale are not the rows'");
  ClassScores out;
  out.classes = s.classes;
  out.scale = ClassScale::probability;
  out.rows = s.rows;
  out.label = s.label;
  out.weight = s.weight;
  out.values.resize(s.values.size());
  std::uint64_t raised = 0;
  for (std::size_t r = 0; r < s.rows; ++r)
    if (map.map(s.row(r), out.values.data() + r * K)) ++raised;
  if (floored) *floored = raised;
  return out;
}

bool ClassReportSet::any_gate_exceeded() const noexcept {
  return std::any_of(gates.begin(), gates.end(), [](const GateResult& g) { return g.exceeded; });
}

std::vector<std::string> ClassReportSet::cautions() const {
  std::vector<std::string> out;
  if (models.empty()) return out;
  const auto in_every = [&](const std::string& c) {
    return std::all_of(models.begin(), models.end(), [&](const ClassReport& r) {
      return std::find(r.cautions.begin(), r.cautions.end(), c) != r.cautions.end();
    });
  };
  for (const std::string& c : models.front().cautions)
    if (in_every(c)) out.push_back(c);
  for (const ClassReport& r : models)
    for (const std::string& c : r.cautions)
      if (!in_every(c)) out.push_back(r.name + ": " + c);
  return out;
}

}  // namespace plumb
