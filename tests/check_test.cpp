// check_draws_csv / check_chain_runs (analysis/check.hpp): the model `covey check` prints.
#include <gtest/gtest.h>

#include <algorithm>
#include <fstream>
#include <limits>
#include <random>
#include <span>
#include <string>

#include "covey/analysis/check.hpp"
#include "covey/core/error.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

// Four chains of 200 draws: "mixed" is independent uniform noise (passes), "stuck" sits at a
// different level in each chain (R-hat far above 1: fails), "constant" never moves (undefined).
std::string write_three_quantities(const testing_util::TempDir& dir) {
  std::mt19937_64 rng(17);
  std::uniform_real_distribution<double> u(0, 1);
  std::string text = "chain,iteration,mixed,stuck,constant\n";
  for (int c = 1; c <= 4; ++c)
    for (int t = 1; t <= 200; ++t)
      text += std::to_string(c) + "," + std::to_string(t) + "," + std::to_string(u(rng)) + "," +
              std::to_string(c + 0.01 * u(rng)) + ",1\n";
  const std::string path = dir.file("draws.csv");
  std::ofstream(path) << text;
  return path;
}

TEST(Check, DrawsCsvGivesItemsStatusesOrderAndVerdict) {
  testing_util::TempDir dir;
  Thresholds t;
  t.max_rhat = 1.05;
  t.min_ess = 50;
  const CheckResult r = check_draws_csv(write_three_quantities(dir), t);
  EXPECT_EQ(r.chains, 4);
  EXPECT_EQ(r.iterations, 200);
  EXPECT_EQ(r.plural, "quantities");
  ASSERT_EQ(r.items.size(), 3u);
  EXPECT_EQ(r.items[1].kind, "quantity");
  EXPECT_EQ(r.items[1].name, "stuck");
  EXPECT_EQ(r.items[1].mean_key, "mean");
  EXPECT_EQ(r.items[1].display_name, "stuck");
  ASSERT_EQ(r.status.size(), 3u);
  EXPECT_EQ(r.status[0], FeatureStatus::kPass);
  EXPECT_EQ(r.status[1], FeatureStatus::kFail);
  EXPECT_EQ(r.status[2], FeatureStatus::kUndefined);
  // The order and the verdict are the diagnostics layer's rule, applied to these summaries.
  EXPECT_EQ(r.worst_first, worst_first(r.summaries, t));
  const auto at = [&r](std::size_t i) {
    return std::find(r.worst_first.begin(), r.worst_first.end(), i) - r.worst_first.begin();
  };
  EXPECT_LT(at(1), at(0));  // the failing quantity before the passing one
  EXPECT_EQ(r.verdict.passing, 1u);
  EXPECT_EQ(r.verdict.failing, 1u);
  EXPECT_EQ(r.verdict.undefined, 1u);
  EXPECT_FALSE(r.verdict.converged());
  // Looser thresholds can only move "stuck" to a pass if its R-hat is below them.
  Thresholds loose = t;
  loose.max_rhat = 1e9;
  loose.min_ess = 0;
  EXPECT_TRUE(check_draws_csv(dir.file("draws.csv"), loose).verdict.converged());
}

TEST(Check, ThresholdsNameTheFieldAndChainRunsNeedRunFiles) {
  Thresholds t;
  t.max_rhat = 1.0;
  try {
    check_thresholds(t);
    ADD_FAILURE() << "expected an OptionError";
  } catch (const OptionError& e) {
    EXPECT_STREQ(e.what(), "check: max_rhat must exceed 1, got 1");
  }
  testing_util::TempDir dir;
  EXPECT_THROW(check_chain_runs({dir.file("missing.h5")}, FeatureKinds{}, Thresholds{}),
               InputError);
}

}  // namespace
}  // namespace covey

namespace covey {
namespace {

// judge (diagnostics.hpp): the one verdict, counted per feature and per measure.
TEST(Verdict, CountsEachMeasureAndStatesTheOutcome) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const Thresholds t;  // R-hat < 1.01, ESS > 400
  const std::vector<FeatureSummary> s = {
      {0.5, 1.001, 900, 800, 0, 0.01},  // passes
      {0.5, 1.001, 900, nan, 0, 0.01},  // passes: an undefined tail ESS alone is not checked
      {0.5, 1.2, 900, 300, 0, 0.01},    // fails R-hat and tail ESS
      {1.0, nan, nan, nan, 0, nan}};    // undefined
  const Verdict v = judge(s, t);
  EXPECT_EQ(v.features, 4u);
  EXPECT_EQ(v.passing, 2u);
  EXPECT_EQ(v.failing, 1u);
  EXPECT_EQ(v.undefined, 1u);
  EXPECT_EQ(v.rhat.passing, 2u);
  EXPECT_EQ(v.rhat.failing, 1u);
  EXPECT_EQ(v.rhat.undefined, 1u);
  EXPECT_EQ(v.ess_bulk.passing, 3u);
  EXPECT_EQ(v.ess_bulk.undefined, 1u);
  EXPECT_EQ(v.ess_tail.passing, 1u);
  EXPECT_EQ(v.ess_tail.failing, 1u);
  EXPECT_EQ(v.ess_tail.undefined, 2u);
  EXPECT_EQ(v.state, Verdict::State::kNotConverged);
  EXPECT_EQ(judge(std::span(s).first(2), t).state, Verdict::State::kConverged);
  EXPECT_EQ(judge(std::span(s).last(1), t).state, Verdict::State::kUndetermined);
  EXPECT_EQ(judge({}, t).state, Verdict::State::kUndetermined);
}

}  // namespace
}  // namespace covey
