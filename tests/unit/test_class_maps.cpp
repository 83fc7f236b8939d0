// Properties of the multi-class maps and their artifact: the known true map
// of the invented outcome data (examples/make_outcome_data.py builds the
// model's log-odds as twice the true ones plus a shift, so the true map is a
// vector scaling with every scale 1/2), weights as repeated rows, the
// refusal of a class without rows, and the artifact's exact round trip.
// The reference checks against R are in tests/reference/test_multiclass_reference.cpp.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "plumb/class_map.hpp"
#include "plumb/error.hpp"
#include "plumb/io/artifact.hpp"
#include "plumb/io/class_artifact.hpp"
#include "plumb/io/class_input.hpp"
#include "plumb/maps/class_scaling_map.hpp"
#include "support/test_helpers.hpp"

namespace {

plumb::ClassScores outcome_rows() {
  plumb::io::ClassColumns c;
  c.scores = {"p_*"};
  c.label = "outcome";
  return plumb::io::read_class_scores(std::string(PLUMB_TEST_SOURCE_DIR) + "/../data/outcomes.csv", c).data;
}

// A small seeded data set of K = 3 with weights, some zero.
plumb::ClassScores small_rows(std::uint64_t seed) {
  std::mt19937_64 g(seed);
  plumb::ClassScores s;
  s.classes = {"a", "b", "c"};
  s.scale = plumb::ClassScale::logit;
  s.rows = 300;
  for (std::size_t r = 0; r < s.rows; ++r) {
    const std::size_t y = plumb::test::below(g, 3);
    for (std::size_t k = 0; k < 3; ++k) s.values.push_back((k == y ? 1.5 : 0.0) + 3.0 * plumb::test::uniform01(g) - 1.5);
    s.label.push_back(static_cast<std::uint32_t>(y));
    s.weight.push_back(r % 7 == 0 ? 0.0 : 1.0 + static_cast<double>(r % 3));
  }
  return s;
}

plumb::ClassArtifact artifact_of(std::unique_ptr<plumb::ClassCalibrationMap> m) {
  plumb::ClassArtifact a;
  a.map = std::move(m);
  for (const std::string& c : a.map->classes()) a.score_columns.push_back("p_" + c);
  a.provenance.source = "rows.csv";
  a.provenance.rows = 300;
  a.provenance.weight_total = 3.0;
  a.provenance.class_weights = std::vector<double>(a.map->k(), 1.0);
  a.provenance.label_column = "y";
  a.provenance.tool = "plumb test";
  return a;
}

}  // namespace

TEST_CASE("vector scaling recovers the invented outcome data's true scales", "[multiclass]") {
  // Known truth by construction (examples/make_outcome_data.py): scales 1/2.
  const plumb::ClassScores s = outcome_rows();
  REQUIRE(s.k() == 4);
  const auto m = plumb::fit_class_map("vector", s);
  const auto& v = dynamic_cast<const plumb::ClassScalingMap&>(*m);
  CHECK(m->diagnostics().converged);
  // Rare classes (lost: about 1% of 8,000 rows) leave their scale less sure.
  for (std::size_t k = 0; k < 4; ++k) CHECK(std::fabs(v.matrix()[k * 4 + k] - 0.5) < 0.15);
  // A temperature of about 2 (the true scales, up to the shift it cannot hold).
  const auto t = plumb::fit_class_map("temperature", s);
  CHECK(std::fabs(dynamic_cast<const plumb::ClassScalingMap&>(*t).temperature() - 2.0) < 0.3);
  // Every fit lowers the log loss of the over-confident scores.
  const auto identity = plumb::ClassScalingMap(plumb::ClassScalingMap::Form::temperature, s.classes, s.scale, {1.0},
                                               std::vector<double>(4, 0.0), 0.0);
  const double raw = plumb::class_log_loss(identity, s);
  CHECK(t->diagnostics().log_loss < raw);
  CHECK(m->diagnostics().log_loss < t->diagnostics().log_loss);
}

TEST_CASE("a weight of two is a row given twice", "[multiclass]") {
  plumb::ClassScores weighted = small_rows(7), repeated;
  repeated.classes = weighted.classes;
  repeated.scale = weighted.scale;
  for (std::size_t r = 0; r < weighted.rows; ++r) {
    const int times = static_cast<int>(weighted.weight[r]);
    for (int t = 0; t < times; ++t) {
      repeated.values.insert(repeated.values.end(), weighted.row(r), weighted.row(r) + 3);
      repeated.label.push_back(weighted.label[r]);
      ++repeated.rows;
    }
  }
  for (const char* kind : {"temperature", "vector", "dirichlet"}) {
    INFO(kind);
    plumb::ClassMapOptions o;
    o.l2 = 0.01;
    const auto a = plumb::fit_class_map(kind, weighted, o), b = plumb::fit_class_map(kind, repeated, o);
    double q1[3], q2[3];
    for (std::size_t r = 0; r < weighted.rows; ++r) {
      a->map(weighted.row(r), q1);
      b->map(weighted.row(r), q2);
      for (int k = 0; k < 3; ++k) CHECK(std::fabs(q1[k] - q2[k]) < 1e-9);
    }
  }
}

TEST_CASE("each map's rows sum to 1 and a larger l2 pulls dirichlet towards the identity", "[multiclass]") {
  const plumb::ClassScores s = small_rows(11);
  for (const auto& kind : plumb::class_map_kinds()) {
    INFO(kind.name);
    const auto m = plumb::fit_class_map(kind.name, s);
    double q[3];
    for (std::size_t r = 0; r < s.rows; ++r) {
      m->map(s.row(r), q);
      CHECK(std::fabs(q[0] + q[1] + q[2] - 1.0) < 1e-12);
    }
  }
  double off_small = 0.0, off_large = 0.0;
  for (double l2 : {1e-4, 10.0}) {
    plumb::ClassMapOptions o;
    o.l2 = l2;
    const auto m = plumb::fit_class_map("dirichlet", s, o);
    const auto& d = dynamic_cast<const plumb::ClassScalingMap&>(*m);
    double off = 0.0;
    for (int c = 0; c < 3; ++c)
      for (int j = 0; j < 3; ++j)
        if (c != j) off += d.matrix()[c * 3 + j] * d.matrix()[c * 3 + j];
    (l2 < 1.0 ? off_small : off_large) = off + d.bias()[0] * d.bias()[0];
  }
  CHECK(off_large < off_small);
}

TEST_CASE("a class without rows is refused for fit", "[multiclass]") {
  // Three classes' rows with a fourth class no row is labelled with (its
  // value appended after the three; s.row() reads three per row while s has
  // three classes).
  const plumb::ClassScores s = small_rows(3);
  plumb::ClassScores four;
  four.classes = s.classes;
  four.classes.push_back("d");
  four.scale = s.scale;
  four.rows = s.rows;
  for (std::size_t r = 0; r < s.rows; ++r) {
    four.values.insert(four.values.end(), s.row(r), s.row(r) + 3);
    four.values.push_back(0.0);
  }
  four.label = s.label;
  try {
    plumb::fit_class_map("vector", four);
    FAIL("no refusal");
  } catch (const plumb::Error& e) {
    CHECK(e.kind() == plumb::ErrorKind::fit);
    CHECK(e.message() == "the class 'd' has no row of positive weight");
  }
}

TEST_CASE("dirichlet is refused beyond its class limit, vector is not", "[multiclass]") {
  plumb::ClassScores s;
  s.scale = plumb::ClassScale::logit;
  const std::size_t k = plumb::max_dirichlet_classes + 1;
  for (std::size_t c = 0; c < k; ++c) s.classes.push_back("c" + std::to_string(c));
  for (std::size_t r = 0; r < 2 * k; ++r) {
    for (std::size_t c = 0; c < k; ++c) s.values.push_back(c == r % k ? 1.0 : 0.0);
    s.label.push_back(static_cast<std::uint32_t>((r + r / k) % k));
    ++s.rows;
  }
  CHECK(plumb::test::error_kind([&] { plumb::fit_class_map("dirichlet", s); }) == plumb::ErrorKind::fit);
  CHECK_FALSE(plumb::test::error_kind([&] { plumb::fit_class_map("vector", s); }).has_value());
}

TEST_CASE("the multi-class artifact reads back exactly, at format version 4", "[multiclass][artifact]") {
  const plumb::ClassScores s = small_rows(5);
  for (const auto& kind : plumb::class_map_kinds()) {
    INFO(kind.name);
    plumb::ClassMapOptions o;
    o.l2 = 0.003;
    const plumb::ClassArtifact a = artifact_of(plumb::fit_class_map(kind.name, s, o));
    const std::string text = plumb::class_artifact_to_text(a);
    const plumb::ClassArtifact b = plumb::class_artifact_from_text(text, "m.json");
    CHECK(plumb::class_artifact_to_text(b) == text);
    CHECK(plumb::class_artifact_version(a) == 4);
    CHECK(b.map->classes() == a.map->classes());
    double q1[3], q2[3];
    for (std::size_t r = 0; r < s.rows; ++r) {
      a.map->map(s.row(r), q1);
      b.map->map(s.row(r), q2);
      for (int k = 0; k < 3; ++k) CHECK(q1[k] == q2[k]);
    }
    // A binary reader refuses it rather than misreading it.
    try {
      plumb::artifact_from_text(text, "m.json");
      FAIL("no refusal");
    } catch (const plumb::Error& e) {
      CHECK(e.kind() == plumb::ErrorKind::artifact);
      CHECK(e.message() == "the map artifact holds a multi-class map");
    }
  }
}

TEST_CASE("the multi-class artifact refuses edits it can see", "[multiclass][artifact]") {
  const plumb::ClassArtifact a = artifact_of(plumb::fit_class_map("temperature", small_rows(9)));
  nlohmann::json doc = plumb::class_artifact_to_json(a);
  auto refusal = [](nlohmann::json d) {
    d["integrity_sha256"] = plumb::integrity_hash(d);
    try {
      plumb::class_artifact_from_text(d.dump(), "m.json");
    } catch (const plumb::Error& e) {
      CHECK(e.kind() == plumb::ErrorKind::artifact);
      return e.message();
    }
    return std::string("accepted");
  };
  nlohmann::json d = doc;
  d["classes"] = {"a", "a", "c"};
  CHECK(refusal(d).find("names a class twice") != std::string::npos);
  d = doc;
  d["format_version"] = 2;
  CHECK(refusal(d).find("is present in a format version 2 document") != std::string::npos);
  d = doc;
  d["parameters"]["temperature"] = -1.0;
  CHECK(refusal(d).find("is not positive") != std::string::npos);
  d = doc;
  d["input"]["score_columns"] = {"p_a"};
  CHECK(refusal(d).find("does not hold one column per class") != std::string::npos);
  d = doc;
  d["classes"] = {"a"};
  CHECK(refusal(d).find("fewer than two") != std::string::npos);
}

#include "plumb/class_cross_fit.hpp"

TEST_CASE("folds stratified by class hold each class evenly", "[multiclass][cross_fit]") {
  const plumb::ClassScores s = small_rows(13);
  const plumb::Folds f = plumb::class_stratified_folds(s.label, 3, 4, 99);
  REQUIRE(f.fold_of_row.size() == s.rows);
  for (std::uint32_t c = 0; c < 3; ++c) {
    std::vector<int> count(4, 0);
    for (std::size_t i = 0; i < s.rows; ++i)
      if (s.label[i] == c) ++count[f.fold_of_row[i]];
    CHECK(*std::max_element(count.begin(), count.end()) - *std::min_element(count.begin(), count.end()) <= 1);
  }
  // The same seed gives the same folds; another seed others.
  CHECK(plumb::class_stratified_folds(s.label, 3, 4, 99).fold_of_row == f.fold_of_row);
  CHECK(plumb::class_stratified_folds(s.label, 3, 4, 100).fold_of_row != f.fold_of_row);
}

TEST_CASE("multi-class cross-fit scores each row by a map that never saw it, and applies the one-SE rule",
          "[multiclass][cross_fit]") {
  const plumb::ClassScores s = small_rows(17);
  const plumb::Folds f = plumb::class_stratified_folds(s.label, 3, 3, 5);
  const auto specs = plumb::auto_class_candidates(plumb::default_l2_grid(), "platt");
  const plumb::ClassCrossFitResult r = plumb::class_cross_fit(s, f, specs);
  REQUIRE(r.candidates.size() == specs.size());
  // The temperature candidate's out-of-fold log loss, recomputed fold by fold
  // from fits on the other folds' rows (weights as read).
  double sum = 0.0, wt = 0.0;
  for (std::uint32_t j = 0; j < 3; ++j) {
    plumb::ClassScores train;
    train.classes = s.classes;
    train.scale = s.scale;
    for (std::size_t i = 0; i < s.rows; ++i)
      if (f.fold_of_row[i] != j) {
        train.values.insert(train.values.end(), s.row(i), s.row(i) + 3);
        train.label.push_back(s.label[i]);
        train.weight.push_back(s.weight[i]);
        ++train.rows;
      }
    const auto m = plumb::fit_class_map("temperature", train);
    double q[3];
    for (std::size_t i = 0; i < s.rows; ++i)
      if (f.fold_of_row[i] == j) {
        m->map(s.row(i), q);
        sum += -s.weight[i] * std::log(q[s.label[i]]);
        wt += s.weight[i];
      }
  }
  CHECK(std::fabs(r.candidates[0].log_loss - sum / wt) < 1e-12);
  // The best has the lowest log loss; the chosen one is within one standard
  // error of it and no candidate within it is simpler.
  for (const auto& c : r.candidates) CHECK(c.log_loss >= r.candidates[r.best].log_loss);
  const auto& chosen = r.candidates[r.chosen];
  CHECK(chosen.diff_vs_best <= chosen.diff_se);
  for (const auto& c : r.candidates)
    if (c.diff_vs_best <= c.diff_se) CHECK(c.rank >= chosen.rank);
  // A larger L2 counts as simpler.
  CHECK(r.candidates[2].name == "dirichlet l2=1");
  CHECK(r.candidates[2].rank < r.candidates[3].rank);
}
