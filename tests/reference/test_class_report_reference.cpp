// The multi-class report's figures against a direct computation in R base
// on the same rows (tests/reference/class_report_reference.R): invented
// 4-class rows with an over-confident score and a block of tied top labels,
// unweighted and weighted.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <iostream>
#include <string>

#include "plumb/class_report.hpp"
#include "support/reference.hpp"

namespace {

constexpr double exact = 1e-9;  // closed-form sums; only the order of additions differs

// The largest difference seen, printed at the end of the case for the record.
double largest = 0.0;
bool close(double ours, double theirs) {
  largest = std::max(largest, std::abs(ours - theirs));
  return std::abs(ours - theirs) <= exact;
}

plumb::ClassScores read_rows(const std::map<std::string, std::vector<double>>& rows, bool weighted) {
  plumb::ClassScores s;
  s.classes = {"on_time", "late", "lost", "returned"};
  s.rows = rows.at("label").size();
  for (std::size_t r = 0; r < s.rows; ++r) {
    for (const char* c : {"p1", "p2", "p3", "p4"}) s.values.push_back(rows.at(c)[r]);
    s.label.push_back(static_cast<std::uint32_t>(rows.at("label")[r]));
  }
  if (weighted) s.weight = rows.at("weight");
  return s;
}

}  // namespace

TEST_CASE("Multi-class report figures agree with a direct R computation", "[class_report][reference]") {
  const std::string dir = plumb::test::scratch_dir("class_report_reference");
  plumb::test::run_r("class_report_reference.R", dir);
  const auto rows = plumb::test::read_numeric_csv(dir + "/class_rows.csv");
  const auto ans = plumb::test::read_numeric_csv(dir + "/class_answers.csv");
  REQUIRE(rows.at("label").size() == 3000);
  for (const bool weighted : {false, true}) {
    INFO("weighted " << weighted);
    const std::string suffix = weighted ? "_w" : "";
    const auto r = [&](const std::string& key) { return ans.at(key + suffix).at(0); };
    plumb::ClassReportOptions o;
    o.bootstrap = 0;
    const plumb::ClassReport rep = plumb::build_class_report(read_rows(rows, weighted), o);
    // Reference: R weighted.mean(rowSums((P - Y)^2), w), the multi-class Brier score (Brier 1950).
    CHECK(close(rep.brier, r("brier")));
    // Reference: R weighted.mean(-log(pmax(P[cbind(1:n, y)], 1e-12)), w).
    CHECK(close(rep.log_loss, r("log_loss")));
    // Reference: R max.col(P, ties.method = "first") against the labels.
    CHECK(close(rep.accuracy, r("accuracy")));
    CHECK(close(rep.mean_confidence, r("mean_confidence")));
    CHECK(close(rep.confidence_gap, r("confidence_gap")));
    // Reference: R tapply over the same bins, Naeini et al. (2015) ECE of the
    // confidence against correctness (top-label ECE, Guo et al. 2017).
    CHECK(close(rep.top_label_equal_width.ece, r("top_ece_width")));
    CHECK(close(rep.top_label_equal_mass.ece, r("top_ece_mass")));
    // Reference: R, mean over classes of each one-vs-rest ECE (class-wise ECE, Kull et al. 2019).
    CHECK(close(rep.classwise_ece_equal_width, r("classwise_ece_width")));
    CHECK(close(rep.classwise_ece_equal_mass, r("classwise_ece_mass")));
    REQUIRE(rep.classes.size() == 4);
    for (std::size_t k = 0; k < 4; ++k) {
      const std::string c = "class" + std::to_string(k + 1);
      INFO(c);
      CHECK(close(rep.classes[k].ece_equal_width.ece, r(c + "_ece_width")));
      CHECK(close(rep.classes[k].observed_rate, r(c + "_share")));
      CHECK(close(rep.classes[k].mean_forecast, r(c + "_mean_forecast")));
    }
  }
  std::cout << "class report against R: largest difference " << largest << "\n";
}
