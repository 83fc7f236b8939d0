// The multi-class report's core (class_report.hpp) on cases worked by hand,
// and its properties: weights as frequencies, logits through softmax, a
// class with no rows, and a bootstrap that does not depend on the threads.
#include <catch2/catch.hpp>

#include <cmath>
#include <random>
#include <string>

#include "plumb/class_report.hpp"
#include "plumb/error.hpp"

namespace {

using Catch::Matchers::WithinAbs;

// Four rows, three classes; worked by hand below.
plumb::ClassScores hand_case() {
  plumb::ClassScores s;
  s.classes = {"on_time", "late", "lost"};
  s.rows = 4;
  s.values = {0.7, 0.2, 0.1,   // label 0: top 0 (right), confidence 0.7
              0.2, 0.5, 0.3,   // label 2: top 1 (wrong), confidence 0.5
              0.1, 0.1, 0.8,   // label 2: top 2 (right), confidence 0.8
              0.4, 0.4, 0.2};  // label 1: a tie, top 0 (the first), wrong, confidence 0.4
  s.label = {0, 2, 2, 1};
  return s;
}

plumb::ClassReportOptions two_bins() {
  plumb::ClassReportOptions o;
  o.bins = 2;
  o.bootstrap = 0;
  return o;
}

plumb::ClassScores random_case(std::size_t n, std::size_t K, std::uint64_t seed) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> z(0.0, 1.5);
  plumb::ClassScores s;
  for (std::size_t k = 0; k < K; ++k) s.classes.push_back("c" + std::to_string(k));
  s.rows = n;
  for (std::size_t r = 0; r < n; ++r) {
    std::vector<double> e(K);
    double sum = 0.0;
    for (double& v : e) sum += v = std::exp(z(gen));
    for (double v : e) s.values.push_back(v / sum);
    s.label.push_back(static_cast<std::uint32_t>(gen() % K));
  }
  return s;
}

}  // namespace

TEST_CASE("class report: a small case worked by hand", "[class_report]") {
  const plumb::ClassReport r = plumb::build_class_report(hand_case(), two_bins());
  // Hand-worked: Brier terms 0.09+0.04+0.01, 0.04+0.25+0.49, 0.01+0.01+0.04,
  // 0.16+0.36+0.04 = 0.14, 0.78, 0.06, 0.56; mean 0.385.
  CHECK_THAT(r.brier, WithinAbs(0.385, 1e-12));
  // Hand-worked: -(ln 0.7 + ln 0.3 + ln 0.8 + ln 0.4) / 4.
  CHECK_THAT(r.log_loss, WithinAbs(-(std::log(0.7) + std::log(0.3) + std::log(0.8) + std::log(0.4)) / 4, 1e-12));
  // Hand-worked: rows 0 and 2 right; confidences 0.7, 0.5, 0.8, 0.4.
  CHECK_THAT(r.accuracy, WithinAbs(0.5, 1e-12));
  CHECK_THAT(r.mean_confidence, WithinAbs(0.6, 1e-12));
  CHECK_THAT(r.confidence_gap, WithinAbs(0.1, 1e-12));
  // Hand-worked, bins [0, 0.5) and [0.5, 1]: bin 0 holds 0.4 (wrong), gap 0.4
  // over 1 row; bin 1 holds 0.5, 0.7, 0.8 (2 of 3 right), gap 0. ECE 0.4/4.
  CHECK_THAT(r.top_label_equal_width.ece, WithinAbs(0.1, 1e-12));
  // Hand-worked one-vs-rest ECEs over the same two bins: class 0
  // (0.7 + 0.3)/4 = 0.25, class 1 (0.3 + 0.5)/4 = 0.2, class 2 (0.4 + 0.2)/4
  // = 0.15; class-wise ECE their mean 0.2.
  REQUIRE(r.classes.size() == 3);
  CHECK_THAT(r.classes[0].ece_equal_width.ece, WithinAbs(0.25, 1e-12));
  CHECK_THAT(r.classes[1].ece_equal_width.ece, WithinAbs(0.2, 1e-12));
  CHECK_THAT(r.classes[2].ece_equal_width.ece, WithinAbs(0.15, 1e-12));
  CHECK_THAT(r.classwise_ece_equal_width, WithinAbs(0.2, 1e-12));
  // Hand-worked: class 2 labels 2 of 4 rows, mean probability (0.1+0.3+0.8+0.2)/4.
  CHECK(r.classes[2].rows == 2);
  CHECK_THAT(r.classes[2].observed_rate, WithinAbs(0.5, 1e-12));
  CHECK_THAT(r.classes[2].mean_forecast, WithinAbs(0.35, 1e-12));
  CHECK_THAT(r.classes[2].calibration_in_the_large, WithinAbs(-0.15, 1e-12));
  CHECK(r.true_class_at_zero == 0);
  CHECK(!r.bootstrap);
  CHECK(r.top_label_band.empty());
  // Four rows for two bins is thin: the report says so.
  CHECK(!r.cautions.empty());
}

TEST_CASE("class report: a weight of 2 counts as the row twice", "[class_report]") {
  plumb::ClassScores weighted = hand_case();
  weighted.weight = {1.0, 2.0, 1.0, 1.0};
  plumb::ClassScores doubled = hand_case();
  doubled.rows = 5;
  doubled.values.insert(doubled.values.end(), {0.2, 0.5, 0.3});
  doubled.label.push_back(2);
  const plumb::ClassReport a = plumb::build_class_report(weighted, two_bins());
  const plumb::ClassReport b = plumb::build_class_report(doubled, two_bins());
  CHECK_THAT(a.brier, WithinAbs(b.brier, 1e-12));
  CHECK_THAT(a.log_loss, WithinAbs(b.log_loss, 1e-12));
  CHECK_THAT(a.accuracy, WithinAbs(b.accuracy, 1e-12));
  CHECK_THAT(a.top_label_equal_width.ece, WithinAbs(b.top_label_equal_width.ece, 1e-12));
  CHECK_THAT(a.top_label_equal_mass.ece, WithinAbs(b.top_label_equal_mass.ece, 1e-12));
  CHECK_THAT(a.classwise_ece_equal_width, WithinAbs(b.classwise_ece_equal_width, 1e-12));
  CHECK_THAT(a.classwise_ece_equal_mass, WithinAbs(b.classwise_ece_equal_mass, 1e-12));
  // Hand-worked: (0.14 + 2 * 0.78 + 0.06 + 0.56) / 5.
  CHECK_THAT(a.brier, WithinAbs(2.32 / 5, 1e-12));
}

TEST_CASE("class report: logits are read through softmax", "[class_report]") {
  plumb::ClassScores logits = hand_case();
  logits.scale = plumb::ClassScale::logit;
  // log p plus a different constant per row: the same probabilities.
  for (std::size_t i = 0; i < logits.values.size(); ++i) logits.values[i] = std::log(logits.values[i]) + double(i / 3) * 5.0;
  const plumb::ClassReport a = plumb::build_class_report(logits, two_bins());
  const plumb::ClassReport b = plumb::build_class_report(hand_case(), two_bins());
  CHECK(a.scale == plumb::ClassScale::logit);
  CHECK_THAT(a.brier, WithinAbs(b.brier, 1e-12));
  CHECK_THAT(a.log_loss, WithinAbs(b.log_loss, 1e-12));
  CHECK_THAT(a.classwise_ece_equal_width, WithinAbs(b.classwise_ece_equal_width, 1e-12));
}

TEST_CASE("class report: a class with no rows is cautioned and still counted", "[class_report]") {
  plumb::ClassScores s = hand_case();
  // A fourth class that no row is labelled with, given 0.1 of each row.
  s.classes.push_back("returned");
  std::vector<double> v;
  for (std::size_t r = 0; r < 4; ++r) {
    for (std::size_t k = 0; k < 3; ++k) v.push_back(0.9 * s.values[r * 3 + k]);
    v.push_back(0.1);
  }
  s.values = v;
  const plumb::ClassReport r = plumb::build_class_report(s, two_bins());
  REQUIRE(r.classes.size() == 4);
  CHECK(r.classes[3].rows == 0);
  // Its one-vs-rest ECE is its mean forecast, 0.1, and the mean counts it.
  CHECK_THAT(r.classes[3].ece_equal_width.ece, WithinAbs(0.1, 1e-12));
  double sum = 0.0;
  for (const auto& c : r.classes) sum += c.ece_equal_width.ece;
  CHECK_THAT(r.classwise_ece_equal_width, WithinAbs(sum / 4, 1e-12));
  bool said = false;
  for (const std::string& c : r.cautions) said = said || c.find("'returned'") != std::string::npos;
  CHECK(said);
}

TEST_CASE("class report: a label given probability 0 is counted and its log loss clipped", "[class_report]") {
  plumb::ClassScores s = hand_case();
  s.values = {1.0, 0.0, 0.0, 0.2, 0.5, 0.3, 0.1, 0.1, 0.8, 0.4, 0.4, 0.2};
  s.label = {1, 2, 2, 1};
  const plumb::ClassReport r = plumb::build_class_report(s, two_bins());
  CHECK(r.true_class_at_zero == 1);
  // Hand-worked: -ln(1e-12) = 27.631... for the first row.
  CHECK_THAT(r.log_loss, WithinAbs((-std::log(1e-12) - std::log(0.3) - std::log(0.8) - std::log(0.4)) / 4, 1e-12));
}

TEST_CASE("class report: the bootstrap does not depend on the thread count", "[class_report]") {
  const plumb::ClassScores s = random_case(3000, 4, 7);
  plumb::ClassReportOptions o;
  o.bootstrap = 60;
  o.seed = 11;
  o.threads = 1;
  const plumb::ClassReport one = plumb::build_class_report(s, o);
  o.threads = 3;
  const plumb::ClassReport three = plumb::build_class_report(s, o);
  REQUIRE(one.bootstrap);
  REQUIRE(three.bootstrap);
  const auto same = [](const plumb::BootstrapInterval& a, const plumb::BootstrapInterval& b) {
    return a.lo == b.lo && a.hi == b.hi && a.used == b.used;
  };
  CHECK(same(one.bootstrap->brier, three.bootstrap->brier));
  CHECK(same(one.bootstrap->log_loss, three.bootstrap->log_loss));
  CHECK(same(one.bootstrap->accuracy, three.bootstrap->accuracy));
  CHECK(same(one.bootstrap->confidence_gap, three.bootstrap->confidence_gap));
  CHECK(same(one.bootstrap->top_label_ece, three.bootstrap->top_label_ece));
  CHECK(same(one.bootstrap->classwise_ece, three.bootstrap->classwise_ece));
  REQUIRE(one.top_label_band.size() == three.top_label_band.size());
  for (std::size_t b = 0; b < one.top_label_band.size(); ++b) {
    CHECK((one.top_label_band[b].lo == three.top_label_band[b].lo ||
           (std::isnan(one.top_label_band[b].lo) && std::isnan(three.top_label_band[b].lo))));
  }
  // Every replicate gave a number, and the intervals hold their estimates
  // (3000 rows: a percentile interval of a smooth mean covers it).
  CHECK(one.bootstrap->brier.used == 60);
  CHECK(one.bootstrap->brier.lo <= one.brier);
  CHECK(one.brier <= one.bootstrap->brier.hi);
  CHECK(one.bootstrap->accuracy.lo <= one.accuracy);
  CHECK(one.accuracy <= one.bootstrap->accuracy.hi);
  CHECK(one.bootstrap->log_loss.lo < one.bootstrap->log_loss.hi);
  // A different seed draws other replicates.
  o.seed = 12;
  const plumb::ClassReport other = plumb::build_class_report(s, o);
  CHECK(!same(one.bootstrap->brier, other.bootstrap->brier));
}

TEST_CASE("class report: ranges of the figures on random rows", "[class_report]") {
  const plumb::ClassScores s = random_case(2000, 5, 3);
  plumb::ClassReportOptions o;
  o.bootstrap = 0;
  const plumb::ClassReport r = plumb::build_class_report(s, o);
  CHECK(r.brier >= 0.0);
  CHECK(r.brier <= 2.0);
  // The top label's probability is at least 1/K.
  CHECK(r.mean_confidence >= 1.0 / 5);
  CHECK(r.accuracy >= 0.0);
  CHECK(r.accuracy <= 1.0);
  // Labels drawn at random: accuracy near 1/5, far below the confidence.
  CHECK(r.confidence_gap > 0.1);
  double total = 0.0;
  for (const auto& c : r.classes) total += c.observed_rate;
  CHECK_THAT(total, WithinAbs(1.0, 1e-12));
}

TEST_CASE("class report: refusals", "[class_report]") {
  plumb::ClassReportOptions o = two_bins();
  o.bins = 0;
  CHECK_THROWS_AS(plumb::build_class_report(hand_case(), o), plumb::Error);
  plumb::ClassScores zero = hand_case();
  zero.weight = {0.0, 0.0, 0.0, 0.0};
  try {
    plumb::build_class_report(zero, two_bins());
    FAIL("no weight was accepted");
  } catch (const plumb::Error& e) {
    CHECK(e.kind() == plumb::ErrorKind::fit);
  }
  plumb::ClassScores bad = hand_case();
  bad.label[0] = 3;
  CHECK_THROWS_AS(plumb::build_class_report(bad, two_bins()), plumb::Error);
  plumb::ClassScores one_class = hand_case();
  one_class.classes = {"only"};
  CHECK_THROWS_AS(plumb::build_class_report(one_class, two_bins()), plumb::Error);
}

TEST_CASE("class report: a replicate reweights the rows by Poisson(1) counts drawn in row order",
          "[class_report]") {
  // With one replicate the interval is that replicate's figure, which is
  // recomputed here from the documented draws (bootstrap.hpp: replicate 0's
  // generator, one 64-bit draw per pair of rows, the high half for the even
  // row, the low half for the odd one, each inverted by poisson1_of_u32).
  const plumb::ClassScores s = random_case(4000, 3, 21);
  plumb::ClassReportOptions o;
  o.bootstrap = 1;
  o.seed = 5;
  o.threads = 1;
  const plumb::ClassReport r = plumb::build_class_report(s, o);
  REQUIRE(r.bootstrap);
  std::mt19937_64 gen = plumb::bootstrap_generator(5, 0);
  double W = 0.0, brier = 0.0, right = 0.0;
  std::uint64_t pair = 0;
  for (std::size_t i = 0; i < s.rows; ++i) {
    if (i % 2 == 0) pair = gen();
    const auto half = static_cast<std::uint32_t>(i % 2 == 0 ? pair >> 32 : pair);
    const double t = static_cast<double>(plumb::poisson1_of_u32(half));
    const double* p = s.row(i);
    double b = 0.0;
    std::size_t top = 0;
    for (std::size_t k = 0; k < 3; ++k) {
      const double d = p[k] - (k == s.label[i] ? 1.0 : 0.0);
      b += d * d;
      if (p[k] > p[top]) top = k;
    }
    W += t;
    brier += t * b;
    right += top == s.label[i] ? t : 0.0;
  }
  CHECK_THAT(r.bootstrap->brier.lo, WithinAbs(brier / W, 1e-12));
  CHECK(r.bootstrap->brier.lo == r.bootstrap->brier.hi);
  CHECK_THAT(r.bootstrap->accuracy.lo, WithinAbs(right / W, 1e-12));
}

TEST_CASE("poisson1_of_bits gives poisson1_draw's count for the same draw", "[class_report][bootstrap]") {
  std::mt19937_64 a = plumb::bootstrap_generator(3, 7), b = a;
  for (int i = 0; i < 200000; ++i) REQUIRE(plumb::poisson1_draw(a) == plumb::poisson1_of_bits(b()));
}

TEST_CASE("poisson1_of_u32: each count's share of the 2^32 uniforms is within 2^-32 of e^-1 / k!",
          "[class_report][bootstrap]") {
  // Published formula: the Poisson(1) probabilities e^-1 / k!. The counts
  // are non-decreasing in u, so each count's uniforms are one run, found by
  // bisection for its first u.
  const auto first_u_with_count_at_least = [](std::uint64_t k) {
    std::uint64_t lo = 0, hi = std::uint64_t{1} << 32;  // answer in [lo, hi]
    while (lo < hi) {
      const std::uint64_t mid = lo + (hi - lo) / 2;
      if (plumb::poisson1_of_u32(static_cast<std::uint32_t>(mid)) >= k) hi = mid;
      else lo = mid + 1;
    }
    return lo;
  };
  double factorial = 1.0;
  for (std::uint64_t k = 0; k < 12; ++k) {
    if (k > 0) factorial *= static_cast<double>(k);
    const double share =
        static_cast<double>(first_u_with_count_at_least(k + 1) - first_u_with_count_at_least(k)) * 0x1p-32;
    CHECK_THAT(share, WithinAbs(std::exp(-1.0) / factorial, 0x1p-32 + 1e-16));
  }
  CHECK(plumb::poisson1_of_u32(0) == 0);
  CHECK(plumb::poisson1_of_u32(0xFFFFFFFFu) >= 10);
}

TEST_CASE("class report: gates read the figures they are named after", "[class_report]") {
  const plumb::ClassReport r = plumb::build_class_report(hand_case(), two_bins());
  // Hand-worked above: Brier 0.385, accuracy 0.5, confidence gap 0.1,
  // top-label ECE 0.1, class-wise ECE 0.2.
  const auto gate = [&](const char* metric, double limit, plumb::GateBound bound) {
    plumb::Gate g;
    g.metric = metric;
    g.limit = limit;
    g.bound = bound;
    return plumb::check_class_gate(g, r);
  };
  CHECK(!gate("brier", 0.4, plumb::GateBound::max).exceeded);
  CHECK(gate("brier", 0.38, plumb::GateBound::max).exceeded);
  CHECK(gate("accuracy", 0.6, plumb::GateBound::min).exceeded);
  CHECK(!gate("accuracy", 0.5, plumb::GateBound::min).exceeded);
  CHECK_THAT(gate("top_label_ece", 1, plumb::GateBound::max).value, WithinAbs(0.1, 1e-12));
  CHECK_THAT(gate("classwise_ece", 1, plumb::GateBound::max).value, WithinAbs(0.2, 1e-12));
  CHECK_THAT(gate("confidence_gap", 0, plumb::GateBound::min).value, WithinAbs(0.1, 1e-12));
  CHECK(plumb::find_class_gate_metric("auc") == nullptr);
  for (const plumb::GateMetric& m : plumb::class_gate_metrics())
    CHECK(std::isfinite(plumb::class_gate_value(r, m.name)));
}

TEST_CASE("class report: a map's model of the rows, as calibrate_class_scores gives it", "[class_report]") {
  plumb::ClassScores s = random_case(400, 3, 11);
  s.weight.assign(s.rows, 1.0);
  s.weight[7] = 2.5;
  const auto map = plumb::fit_class_map("vector", s);
  std::uint64_t floored = 99;
  const plumb::ClassScores q = plumb::calibrate_class_scores(*map, s, &floored);
  CHECK(floored == 0);
  CHECK(q.scale == plumb::ClassScale::probability);
  CHECK(q.classes == s.classes);
  CHECK(q.label == s.label);
  CHECK(q.weight == s.weight);
  REQUIRE(q.values.size() == s.values.size());
  // Each row is the map's own output for the row, and sums to 1.
  std::vector<double> out(3);
  for (std::size_t r = 0; r < s.rows; ++r) {
    map->map(s.row(r), out.data());
    for (std::size_t k = 0; k < 3; ++k) CHECK(q.row(r)[k] == out[k]);
    CHECK_THAT(q.row(r)[0] + q.row(r)[1] + q.row(r)[2], WithinAbs(1.0, 1e-12));
  }
  // A row holding an exact 0 is counted: the map raised it to the floor.
  s.values[0] = 0.0;
  s.values[1] = 1.0 - s.values[2];
  plumb::calibrate_class_scores(*map, s, &floored);
  CHECK(floored == 1);
  // Rows on another scale or with other classes break the precondition.
  plumb::ClassScores other = s;
  other.scale = plumb::ClassScale::logit;
  CHECK_THROWS_AS(plumb::calibrate_class_scores(*map, other), plumb::Error);
  other = s;
  other.classes = {"c0", "c2", "c1"};
  CHECK_THROWS_AS(plumb::calibrate_class_scores(*map, other), plumb::Error);
}

TEST_CASE("class report: segments, flagged by the top label's Spiegelhalter test", "[class_report]") {
  // Three segments: 'a' holds rows as drawn (labels from the scores
  // themselves: calibrated), 'b' the same scores with every label moved to
  // another class (confidence far above accuracy), 'c' five rows only.
  plumb::ClassScores s = random_case(900, 3, 17);
  std::mt19937_64 gen(3);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::vector<std::uint32_t> segment(s.rows);
  for (std::size_t r = 0; r < s.rows; ++r) {
    const double* p = s.row(r);
    const double d = u(gen);
    const std::uint32_t drawn = d < p[0] ? 0 : d < p[0] + p[1] ? 1 : 2;
    segment[r] = r < 5 ? 2 : r % 2 == 0 ? 0 : 1;
    s.label[r] = segment[r] == 1 ? (drawn + 1) % 3 : drawn;
  }
  const std::vector<std::string> names{"a", "b", "c"};
  plumb::ClassReportOptions o;
  o.bootstrap = 0;
  const auto segs = plumb::class_segments(s, segment, names, o, 100.0);
  REQUIRE(segs.size() == 3);
  // Sorted by |gap|: the mislabelled segment first, the thin one last.
  CHECK(segs[0].value == "b");
  CHECK(segs[1].value == "a");
  CHECK(segs[2].value == "c");
  CHECK(segs[2].too_few);
  CHECK(segs[2].rows == 5);
  CHECK(segs[0].flagged);
  CHECK_FALSE(segs[1].flagged);
  CHECK(segs[0].confidence_gap > 0.3);
  // Each segment's figures are those of a report on its rows alone.
  plumb::ClassScores b;
  b.classes = s.classes;
  for (std::size_t r = 0; r < s.rows; ++r)
    if (segment[r] == 1) {
      b.values.insert(b.values.end(), s.row(r), s.row(r) + 3);
      b.label.push_back(s.label[r]);
      ++b.rows;
    }
  const plumb::ClassReport whole = plumb::build_class_report(b, o);
  CHECK(segs[0].rows == b.rows);
  CHECK_THAT(segs[0].brier, WithinAbs(whole.brier, 1e-12));
  CHECK_THAT(segs[0].log_loss, WithinAbs(whole.log_loss, 1e-12));
  CHECK_THAT(segs[0].accuracy, WithinAbs(whole.accuracy, 1e-12));
  CHECK_THAT(segs[0].top_label_ece, WithinAbs(whole.top_label_equal_width.ece, 1e-12));
  CHECK_THAT(segs[0].classwise_ece, WithinAbs(whole.classwise_ece_equal_width, 1e-12));
  // Holm with two tested segments: the smaller p doubled (capped at 1).
  CHECK_THAT(segs[0].p_adjusted, WithinAbs(std::min(1.0, 2 * segs[0].spiegelhalter.p_value), 1e-15));
  CHECK_THROWS_AS(plumb::class_segments(s, std::vector<std::uint32_t>(3, 0), names, o, 100.0), plumb::Error);
}
