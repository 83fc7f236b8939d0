// Reference checks of the PAV fit, the isotonic map and the histogram map
// against R. Cases (built by tests/reference/isotonic_cases.R):
//   pima          MASS::Pima.te scored by a binomial glm fitted on MASS::Pima.tr
//                 (332 rows, every score distinct, unweighted)
//   biopsy        MASS::biopsy without NA rows, glm on V1..V9 fitted on odd rows,
//                 scored on even rows (341 rows, 244 distinct scores: ties)
//   sim_weighted  seeded simulation (set.seed(20261203)), 3000 rows on a grid of
//                 1/400 (ties), weights in [0, 4) with 200 zero
//   sim_plain     seeded simulation (set.seed(20261204)), 2500 continuous
//                 unweighted scores on the margin scale (tie-free)
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <map>
#include <numeric>
#include <string>
#include <vector>

#include "plumb/calibration_map.hpp"
#include "plumb/maps/histogram_map.hpp"
#include "plumb/maps/isotonic_map.hpp"
#include "plumb/pav.hpp"
#include "support/reference.hpp"

namespace {

using Columns = std::map<std::string, std::vector<double>>;

struct CaseInfo {
  const char* name;
  plumb::Scale scale;
  bool tie_free;  // unweighted with distinct scores: stats::isoreg applies
};

const CaseInfo cases[] = {
    {"pima", plumb::Scale::probability, true},
    {"biopsy", plumb::Scale::probability, false},
    {"sim_weighted", plumb::Scale::probability, false},
    {"sim_plain", plumb::Scale::margin, true},
};

constexpr double tolerance = 1e-9;

// Runs the R script once per test run.
const std::string& r_output() {
  static const std::string dir = [] {
    const std::string d = plumb::test::scratch_dir("isotonic_cases");
    plumb::test::run_r("isotonic_cases.R", d);
    return d;
  }();
  return dir;
}

Columns read(const std::string& file) { return plumb::test::read_numeric_csv(r_output() + "/" + file); }

struct Rows {
  Columns cols;
  plumb::Scale scale;
  plumb::FitData data() const { return plumb::FitData{cols.at("score"), cols.at("label"), cols.at("weight"), scale}; }
};

Rows rows_of(const CaseInfo& c) { return Rows{read(std::string(c.name) + "_rows.csv"), c.scale}; }

// The block of `blocks` whose score range holds `s`, or nullptr.
const plumb::PavBlock* block_at(const std::vector<plumb::PavBlock>& blocks, double s) {
  for (const plumb::PavBlock& b : blocks)
    if (b.score_lo <= s && s <= b.score_hi) return &b;
  return nullptr;
}

}  // namespace

TEST_CASE("isotonic reference: PAV and the map match R Iso::pava per distinct score", "[pav][isotonic][reference]") {
  // Reference: Iso::pava(y, w) (package Iso; Turner's implementation of
  // pool-adjacent-violators, Ayer et al. 1955) on the per-distinct-score
  // weighted means with weight sums; ties pooled in R before the call,
  // as Barlow et al. (1972) define the fit on tied scores.
  for (const CaseInfo& c : cases) {
    const Rows rows = rows_of(c);
    const Columns ref = read(std::string(c.name) + "_pava.csv");
    const auto& score = ref.at("score");
    const auto& weight = ref.at("weight");
    const auto& value = ref.at("value");
    REQUIRE(score.size() > 100);

    const plumb::FitData data = rows.data();
    const auto blocks = plumb::pav_fit(data.score, data.label, data.weight);
    const auto map = plumb::fit_map("isotonic", data);
    INFO("case " << c.name);

    double largest_value = 0.0, largest_map = 0.0;
    std::vector<double> ref_block_weight(blocks.size(), 0.0);
    for (std::size_t k = 0; k < score.size(); ++k) {
      const plumb::PavBlock* b = block_at(blocks, score[k]);
      INFO("distinct score " << score[k]);
      REQUIRE(b != nullptr);  // every distinct score of positive weight is fitted
      ref_block_weight[static_cast<std::size_t>(b - blocks.data())] += weight[k];
      const double d = std::abs(b->value - value[k]);
      CHECK(d <= tolerance);
      largest_value = std::max(largest_value, d);
      const plumb::Mapped m = map->map(score[k]);
      CHECK_FALSE(m.outside_fit_range);
      const double dm = std::abs(m.probability - value[k]);
      CHECK(dm <= tolerance);
      largest_map = std::max(largest_map, dm);
    }
    // Block ends are fitted scores, and block weights are the R weight sums
    // of the distinct scores they hold.
    for (std::size_t i = 0; i < blocks.size(); ++i) {
      CHECK(std::binary_search(score.begin(), score.end(), blocks[i].score_lo));
      CHECK(std::binary_search(score.begin(), score.end(), blocks[i].score_hi));
      CHECK(blocks[i].weight == Approx(ref_block_weight[i]).epsilon(1e-12));
    }
    WARN("Iso::pava, case " << c.name << ": " << score.size() << " distinct scores, " << blocks.size()
                            << " blocks; pav_fit max |diff| = " << largest_value
                            << ", isotonic map max |diff| = " << largest_map);
  }
}

TEST_CASE("isotonic reference: PAV matches R stats::isoreg on tie-free unweighted cases", "[pav][isotonic][reference]") {
  // Reference: stats::isoreg(x, y) fitted values yf, which R gives in the
  // order of sorted x (R Core Team, package stats). isoreg takes no weights
  // and does not pool tied x, so only the tie-free unweighted cases are used.
  int checked = 0;
  for (const CaseInfo& c : cases) {
    if (!c.tie_free) continue;
    ++checked;
    const Rows rows = rows_of(c);
    const Columns ref = read(std::string(c.name) + "_isoreg.csv");
    const auto& x = rows.cols.at("score");
    const auto& y = rows.cols.at("label");
    REQUIRE(ref.at("score").size() == x.size());

    // pav_values gives row order; sort rows by score to line up with yf.
    const std::vector<double> fitted = plumb::pav_values(x, y);
    std::vector<std::size_t> order(x.size());
    std::iota(order.begin(), order.end(), std::size_t{0});
    std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return x[a] < x[b]; });
    const auto map = plumb::fit_map("isotonic", rows.data());

    INFO("case " << c.name);
    double largest = 0.0;
    for (std::size_t k = 0; k < order.size(); ++k) {
      REQUIRE(x[order[k]] == ref.at("score")[k]);
      const double d = std::abs(fitted[order[k]] - ref.at("value")[k]);
      const double dm = std::abs(map->map(x[order[k]]).probability - ref.at("value")[k]);
      CHECK(d <= tolerance);
      CHECK(dm <= tolerance);
      largest = std::max({largest, d, dm});
    }
    WARN("stats::isoreg, case " << c.name << ": " << x.size() << " rows; max |diff| = " << largest);
  }
  CHECK(checked == 2);
}

TEST_CASE("histogram reference: bins and frequencies match R tapply", "[histogram][reference]") {
  // Reference: per-bin weighted frequencies from R's
  // tapply(w * y, bin, sum) / tapply(w, bin, sum). The bin of each distinct
  // score is assigned in R by the rule documented in histogram_map.hpp
  // (Zadrozny and Elkan 2001 equal-mass bins; the midpoint-of-cumulative-
  // weight assignment is plumb's own rule), coded there independently.
  for (const CaseInfo& c : cases) {
    const Rows rows = rows_of(c);
    const Columns ref = read(std::string(c.name) + "_histogram.csv");
    plumb::MapOptions opt;
    opt.histogram_bins = 10;
    const auto map = plumb::fit_map("histogram", rows.data(), opt);
    const auto& bins = dynamic_cast<const plumb::HistogramMap&>(*map).bins();
    INFO("case " << c.name);
    REQUIRE(bins.size() == ref.at("bin").size());
    double largest = 0.0;
    for (std::size_t i = 0; i < bins.size(); ++i) {
      INFO("bin " << i);
      CHECK(bins[i].score_lo == ref.at("score_lo")[i]);
      CHECK(bins[i].score_hi == ref.at("score_hi")[i]);
      CHECK(bins[i].weight == Approx(ref.at("weight")[i]).epsilon(1e-12));
      const double d = std::abs(bins[i].value - ref.at("value")[i]);
      CHECK(d <= tolerance);
      largest = std::max(largest, d);
    }
    WARN("histogram vs R tapply, case " << c.name << ": " << bins.size()
                                         << " bins; max |diff| = " << largest);
  }
}
