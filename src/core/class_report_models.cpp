// Several multi-class models side by side (class_report.hpp): the rows as a
// map calibrates them, and the set's gate summary. Kept apart from
// class_report.cpp, whose bootstrap is tuned on its own.
#include <algorithm>
#include <cmath>
#include <span>
#include <string>
#include <vector>

#include "plumb/class_report.hpp"
#include "plumb/calibration_error.hpp"
#include "plumb/error.hpp"
#include "plumb/goodness_of_fit.hpp"
#include "plumb/scale.hpp"

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

std::vector<ClassSegmentSummary> class_segments(const ClassScores& s, std::span<const std::uint32_t> segment,
                                                std::span<const std::string> names, const ClassReportOptions& o,
                                                double min_weight, double alpha) {
  const std::size_t n = s.rows, K = s.k();
  if (segment.size() != n || K < 2 || s.values.size() != n * K || s.label.size() != n)
    throw Error(ErrorKind::internal, "class_segments: the segments or the rows do not match");
  for (std::uint32_t g : segment)
    if (g >= names.size()) throw Error(ErrorKind::internal, "class_segments: a segment is not an index");
  // The rows of each segment, in row order.
  std::vector<std::vector<std::size_t>> members(names.size());
  for (std::size_t i = 0; i < n; ++i) members[segment[i]].push_back(i);
  std::vector<ClassSegmentSummary> out;
  std::vector<double> p(K), conf, right, w, pk, yk;
  for (std::size_t g = 0; g < names.size(); ++g) {
    ClassSegmentSummary seg;
    seg.value = names[g];
    const std::vector<std::size_t>& rows = members[g];
    seg.rows = rows.size();
    double W = 0.0;
    for (std::size_t i : rows) W += s.weight.empty() ? 1.0 : s.weight[i];
    seg.weight = W;
    seg.too_few = !(W >= min_weight) || !(W > 0.0);
    if (seg.too_few) {
      out.push_back(std::move(seg));
      continue;
    }
    const std::size_t m = rows.size();
    conf.assign(m, 0.0);
    right.assign(m, 0.0);
    w.assign(s.weight.empty() ? 0 : m, 0.0);
    std::vector<double> probs(m * K);
    double sb = 0.0, sl = 0.0, sa = 0.0, sc = 0.0;
    for (std::size_t j = 0; j < m; ++j) {
      const std::size_t i = rows[j];
      const double* z = s.row(i);
      if (s.scale == ClassScale::logit) {
        // As build_class_report turns logits into probabilities.
        const double top = *std::max_element(z, z + K);
        double sum = 0.0;
        for (std::size_t k = 0; k < K; ++k) sum += p[k] = std::exp(z[k] - top);
        for (std::size_t k = 0; k < K; ++k) p[k] /= sum;
      } else {
        std::copy(z, z + K, p.begin());
      }
      std::copy(p.begin(), p.end(), probs.begin() + static_cast<std::ptrdiff_t>(j * K));
      std::size_t top = 0;
      for (std::size_t k = 1; k < K; ++k)
        if (p[k] > p[top]) top = k;
      const std::size_t y = s.label[i];
      const double wi = s.weight.empty() ? 1.0 : s.weight[i];
      if (!s.weight.empty()) w[j] = wi;
      conf[j] = p[top];
      right[j] = top == y ? 1.0 : 0.0;
      double brier = 0.0;
      for (std::size_t k = 0; k < K; ++k) {
        const double d = p[k] - (k == y ? 1.0 : 0.0);
        brier += d * d;
      }
      sb += wi * brier;
      sl += wi * -std::log(std::max(p[y], probability_clip));
      sa += wi * right[j];
      sc += wi * conf[j];
    }
    seg.brier = sb / W;
    seg.log_loss = sl / W;
    seg.accuracy = sa / W;
    seg.confidence_gap = sc / W - seg.accuracy;
    seg.top_label_ece = calibration_error(conf, right, w, BinningKind::equal_width, o.bins).ece;
    pk.assign(m, 0.0);
    yk.assign(m, 0.0);
    double classwise = 0.0;
    for (std::size_t k = 0; k < K; ++k) {
      for (std::size_t j = 0; j < m; ++j) {
        pk[j] = probs[j * K + k];
        yk[j] = s.label[rows[j]] == k ? 1.0 : 0.0;
      }
      classwise += calibration_error(pk, yk, w, BinningKind::equal_width, o.bins).ece;
    }
    seg.classwise_ece = classwise / static_cast<double>(K);
    seg.spiegelhalter = spiegelhalter_z(conf, right, w);
    out.push_back(std::move(seg));
  }
  // Holm (1979) step-down over the segments with a p-value.
  std::vector<ClassSegmentSummary*> tested;
  for (ClassSegmentSummary& g : out)
    if (!g.too_few && std::isfinite(g.spiegelhalter.p_value)) tested.push_back(&g);
  std::stable_sort(tested.begin(), tested.end(), [](const ClassSegmentSummary* a, const ClassSegmentSummary* b) {
    return a->spiegelhalter.p_value < b->spiegelhalter.p_value;
  });
  double running = 0.0;
  for (std::size_t i = 0; i < tested.size(); ++i) {
    const double adjusted =
        std::min(1.0, tested[i]->spiegelhalter.p_value * static_cast<double>(tested.size() - i));
    running = std::max(running, adjusted);
    tested[i]->p_adjusted = running;
    tested[i]->flagged = running < alpha;
  }
  std::stable_sort(out.begin(), out.end(), [](const ClassSegmentSummary& a, const ClassSegmentSummary& b) {
    if (a.too_few != b.too_few) return !a.too_few;
    if (a.too_few) return a.value < b.value;
    return std::abs(a.confidence_gap) > std::abs(b.confidence_gap);
  });
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
