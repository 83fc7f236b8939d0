// Reference checks of the multi-class maps against R on datasets::iris with
// scores from a deliberately mis-scaled model (tests/reference/multiclass_iris.R):
//   temperature  against R stats::optimize on the mean log loss over T;
//   vector       against R nnet::nnet (softmax, no hidden layer, only the
//                diagonal and biases free by its mask);
//   dirichlet, l2 = 0 (matrix scaling on log-probabilities) against R
//                nnet::multinom on the log-probabilities;
//   dirichlet, l2 = 0.01 against R stats::optim (BFGS, analytic gradient) on
//                the penalised mean log loss.
// And one-vs-rest with isotonic per class against the binary isotonic map on
// each class's indicator (itself checked against R Iso::pava in
// test_isotonic_reference.cpp) and the renormalisation written out by hand.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <map>
#include <string>
#include <vector>

#include "plumb/class_map.hpp"
#include "plumb/maps/class_scaling_map.hpp"
#include "plumb/maps/one_vs_rest_map.hpp"
#include "support/reference.hpp"

namespace {

using Columns = std::map<std::string, std::vector<double>>;

const std::string& iris_dir() {
  static const std::string dir = [] {
    const std::string d = plumb::test::scratch_dir("multiclass_iris");
    plumb::test::run_r("multiclass_iris.R", d);
    return d;
  }();
  return dir;
}

Columns answers(const std::string& name) { return plumb::test::read_numeric_csv(iris_dir() + "/" + name); }

plumb::ClassScores iris_scores() {
  const Columns rows = answers("iris_rows.csv");
  plumb::ClassScores s;
  s.classes = {"setosa", "versicolor", "virginica"};
  s.scale = plumb::ClassScale::probability;
  s.rows = rows.at("p1").size();
  for (std::size_t r = 0; r < s.rows; ++r) {
    for (const char* c : {"p1", "p2", "p3"}) s.values.push_back(rows.at(c)[r]);
    s.label.push_back(static_cast<std::uint32_t>(rows.at("label")[r]));
  }
  return s;
}

// The largest |q - q_R| over every row and class.
double largest_probability_difference(const plumb::ClassCalibrationMap& m, const plumb::ClassScores& s,
                                      const Columns& ref) {
  double worst = 0.0;
  std::vector<double> q(3);
  for (std::size_t r = 0; r < s.rows; ++r) {
    m.map(s.row(r), q.data());
    worst = std::max({worst, std::fabs(q[0] - ref.at("q1")[r]), std::fabs(q[1] - ref.at("q2")[r]),
                      std::fabs(q[2] - ref.at("q3")[r])});
  }
  return worst;
}

}  // namespace

TEST_CASE("multi-class temperature matches R optimize", "[multiclass][reference]") {
  // Reference: R stats::optimize (tol 1e-12) of the mean log loss over T in [0.05, 20].
  const plumb::ClassScores s = iris_scores();
  const Columns ref = answers("temperature.csv");
  const auto m = plumb::fit_class_map("temperature", s);
  const double t = dynamic_cast<const plumb::ClassScalingMap&>(*m).temperature();
  CHECK(m->diagnostics().converged);
  CHECK(std::fabs(t - ref.at("temperature")[0]) < 1e-6);
  // Ours is at the optimum, so its loss is no larger than R's (up to rounding).
  CHECK(m->diagnostics().log_loss - ref.at("loss")[0] < 1e-12);
  CHECK(std::fabs(m->diagnostics().log_loss - ref.at("loss")[0]) < 1e-10);
}

TEST_CASE("vector scaling matches R nnet with a diagonal mask", "[multiclass][reference]") {
  // Reference: R nnet::nnet (softmax, size 0, skip layer, mask on the diagonal and biases).
  const plumb::ClassScores s = iris_scores();
  const Columns ref = answers("vector.csv");
  const auto m = plumb::fit_class_map("vector", s);
  CHECK(m->diagnostics().converged);
  CHECK(largest_probability_difference(*m, s, ref) < 1e-5);
  CHECK(m->diagnostics().log_loss - ref.at("loss")[0] < 1e-9);
  CHECK(std::fabs(m->diagnostics().log_loss - ref.at("loss")[0]) < 1e-7);
}

TEST_CASE("matrix scaling (dirichlet, l2 = 0) matches R nnet::multinom", "[multiclass][reference]") {
  // Reference: R nnet::multinom(y ~ l1 + l2 + l3), maxit 10000, abstol 1e-14, reltol 1e-15.
  const plumb::ClassScores s = iris_scores();
  const Columns ref = answers("matrix.csv");
  REQUIRE(ref.at("converged")[0] == 1.0);
  const auto m = plumb::fit_class_map("dirichlet", s);
  CHECK(m->diagnostics().converged);
  CHECK(largest_probability_difference(*m, s, ref) < 1e-4);
  CHECK(m->diagnostics().log_loss - ref.at("loss")[0] < 1e-9);
  CHECK(std::fabs(m->diagnostics().log_loss - ref.at("loss")[0]) < 1e-6);
}

TEST_CASE("dirichlet with l2 matches R optim BFGS on the penalised log loss", "[multiclass][reference]") {
  // Reference: R stats::optim, method BFGS with the analytic gradient, reltol 1e-16,
  // on mean log loss + 0.01 * (sum of W's off-diagonal squares + sum of b's squares).
  const plumb::ClassScores s = iris_scores();
  const Columns ref = answers("dirichlet.csv");
  REQUIRE(ref.at("converged")[0] == 1.0);
  plumb::ClassMapOptions o;
  o.l2 = 0.01;
  const auto m = plumb::fit_class_map("dirichlet", s, o);
  const auto& d = dynamic_cast<const plumb::ClassScalingMap&>(*m);
  CHECK(m->diagnostics().converged);
  const char* const w_names[] = {"w11", "w12", "w13", "w21", "w22", "w23", "w31", "w32", "w33"};
  double worst = 0.0;
  for (int i = 0; i < 9; ++i) worst = std::max(worst, std::fabs(d.matrix()[i] - ref.at(w_names[i])[0]));
  for (int c = 0; c < 3; ++c)
    worst = std::max(worst, std::fabs(d.bias()[c] - ref.at("b" + std::to_string(c + 1))[0]));
  CHECK(worst < 1e-5);
  double penalty = 0.0;
  for (int c = 0; c < 3; ++c) {
    penalty += d.bias()[c] * d.bias()[c];
    for (int j = 0; j < 3; ++j)
      if (j != c) penalty += d.matrix()[c * 3 + j] * d.matrix()[c * 3 + j];
  }
  const double objective = m->diagnostics().log_loss + 0.01 * penalty;
  CHECK(objective - ref.at("objective")[0] < 1e-12);
  CHECK(std::fabs(objective - ref.at("objective")[0]) < 1e-9);
}

TEST_CASE("one-vs-rest isotonic is the binary isotonic map per class, renormalised by hand", "[multiclass][reference]") {
  // The binary isotonic map is checked against R Iso::pava (test_isotonic_reference.cpp);
  // here each class's map must be that map on the class's indicator, and the
  // row's probabilities their values divided by their sum (Zadrozny and Elkan 2002).
  const plumb::ClassScores s = iris_scores();
  plumb::ClassMapOptions o;
  o.per_class = "isotonic";
  const auto m = plumb::fit_class_map("one_vs_rest", s, o);
  const auto& ovr = dynamic_cast<const plumb::OneVsRestMap&>(*m);
  std::vector<double> q(3);
  for (std::size_t k = 0; k < 3; ++k) {
    std::vector<double> score(s.rows), label(s.rows);
    for (std::size_t r = 0; r < s.rows; ++r) {
      const double* p = s.row(r);
      score[r] = p[k] / (p[0] + p[1] + p[2]);  // the row over its sum, as one_vs_rest reads it
      label[r] = s.label[r] == k ? 1.0 : 0.0;
    }
    const auto binary = plumb::fit_map("isotonic", plumb::FitData{score, label, {}, plumb::Scale::probability});
    CHECK(ovr.class_map(k).parameters() == binary->parameters());
  }
  double worst = 0.0;
  for (std::size_t r = 0; r < s.rows; ++r) {
    m->map(s.row(r), q.data());
    double v[3], sum = 0.0;
    const double* p = s.row(r);
    for (std::size_t k = 0; k < 3; ++k) sum += (v[k] = ovr.class_map(k)(p[k] / (p[0] + p[1] + p[2])));
    for (std::size_t k = 0; k < 3; ++k) worst = std::max(worst, std::fabs(q[k] - v[k] / sum));
  }
  CHECK(worst < 1e-15);
}
