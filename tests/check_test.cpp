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

// verdict_text (diagnostics.hpp): the one wording of check, chain and the report.
const std::vector<FeatureSummary> kMixedSummaries = {
    {0.5, 1.001, 900, 800, 0, 0.01},  // passes
    {0.5, 1.001, 900, std::numeric_limits<double>::quiet_NaN(), 0,
     0.01},  // passes without a tail ESS
    {1.0, std::numeric_limits<double>::quiet_NaN(), std::numeric_limits<double>::quiet_NaN(),
     std::numeric_limits<double>::quiet_NaN(), 0,
     std::numeric_limits<double>::quiet_NaN()}};  // undefined

TEST(VerdictText, ConvergedWithUndefinedFeaturesNeverSaysAll) {
  VerdictContext context;
  context.chains = 4;
  const VerdictText text = verdict_text(judge(kMixedSummaries, {}), {}, context);
  EXPECT_EQ(text.outcome,
            "converged: 2 of 3 features pass (R-hat < 1.01, bulk ESS > 400 and tail ESS > 400 "
            "where defined); 1 not assessed (R-hat or bulk ESS undefined, e.g. constant draws)");
  EXPECT_EQ(text.outcome.find("all"), std::string::npos);
  EXPECT_EQ(text.measures,
            "R-hat: 2 pass, 0 fail, 1 undefined; bulk ESS: 2 pass, 0 fail, 1 undefined; "
            "tail ESS: 1 pass, 0 fail, 2 undefined");
  EXPECT_TRUE(text.caveats.empty());
}

TEST(VerdictText, AllOnlyWhenEveryFeaturePasses) {
  VerdictContext context;
  context.chains = 4;
  const VerdictText text =
      verdict_text(judge(std::span(kMixedSummaries).first(1), {}), {}, context);
  EXPECT_EQ(text.outcome.rfind("converged: all 1 features pass (", 0), 0u) << text.outcome;
}

TEST(VerdictText, NotConvergedCountsTheFailuresAndTheRule) {
  Thresholds t;
  t.max_rhat = 1.05;
  t.min_ess = 100;
  std::vector<FeatureSummary> s = kMixedSummaries;
  s.push_back({0.5, 1.2, 50, 60, 0, 0.01});
  VerdictContext context;
  context.chains = 4;
  context.noun = "quantities";
  const VerdictText text = verdict_text(judge(s, t), t, context);
  EXPECT_EQ(text.outcome.rfind("not converged: 1 of 4 quantities fail (R-hat < 1.05, bulk ESS > "
                               "100 and tail ESS > 100 where defined); 1 not assessed",
                               0),
            0u)
      << text.outcome;
  EXPECT_NE(text.measures.find("R-hat: 2 pass, 1 fail, 1 undefined"), std::string::npos);
}

TEST(VerdictText, NothingAssessableIsNotAssessed) {
  const VerdictText none = verdict_text(judge({}, {}), {}, {});
  EXPECT_EQ(none.outcome, "not assessed: no features to judge");
  const VerdictText constant = verdict_text(judge(std::span(kMixedSummaries).last(1), {}), {}, {});
  EXPECT_EQ(constant.outcome,
            "not assessed: none of the 1 features has a defined R-hat and bulk ESS (e.g. "
            "constant draws)");
}

TEST(VerdictText, OneChainIsCaveatedAsSplitRhatOnly) {
  VerdictContext context;
  context.chains = 1;
  const VerdictText one = verdict_text(judge(kMixedSummaries, {}), {}, context);
  ASSERT_EQ(one.caveats.size(), 1u);
  EXPECT_NE(one.caveats[0].find("split R-hat"), std::string::npos);
  context.chains = 2;
  EXPECT_TRUE(verdict_text(judge(kMixedSummaries, {}), {}, context).caveats.empty());
}

TEST(VerdictText, ProbabilitiesNearZeroOrOneHaveAnUnreliableMcse) {
  // Within 1/draws of 0 or 1 (here 1/1000), but not exactly 0 or 1 (constant: undefined).
  EXPECT_TRUE(mcse_unreliable(0.001, 1000));
  EXPECT_TRUE(mcse_unreliable(0.9995, 1000));
  EXPECT_FALSE(mcse_unreliable(0.002, 1000));
  EXPECT_FALSE(mcse_unreliable(0.0, 1000));
  EXPECT_FALSE(mcse_unreliable(1.0, 1000));
  VerdictContext context;
  context.chains = 4;
  context.draws = 1000;
  context.unreliable_mcse = 2;
  const VerdictText text = verdict_text(judge(kMixedSummaries, {}), {}, context);
  ASSERT_EQ(text.caveats.size(), 1u);
  EXPECT_EQ(text.caveats[0],
            "2 probabilities lie within 1/1000 (one draw) of 0 or 1: their MCSE is unreliable");
}

TEST(VerdictText, CheckCountsUnreliableMcseOfProbabilitiesOnly) {
  testing_util::TempDir dir;
  // A quantity near 0 is not a probability: no MCSE caveat for a draws CSV.
  const CheckResult r = check_draws_csv(write_three_quantities(dir), {});
  EXPECT_EQ(r.context.chains, 4);
  EXPECT_EQ(r.context.draws, 800u);
  EXPECT_EQ(r.context.noun, "quantities");
  EXPECT_EQ(r.context.unreliable_mcse, 0u);
  EXPECT_EQ(verdict_text(r).outcome.rfind("not converged: 1 of 3 quantities fail", 0), 0u);
}

// The chain's stopping rule judges with the one verdict of the diagnostics (judge), so its
// summary has the wording and the per-measure counts of `check`.
TEST(VerdictText, StoppingRuleStatesItsThresholdsAndMeasureCounts) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  std::vector<FeatureSummary> summaries(7, FeatureSummary{0.5, 1.001, 900, 800, 900, 0.01});
  summaries.resize(10, FeatureSummary{1.0, nan, nan, nan, nan, nan});  // constant edges
  ChainRunOptions options;
  options.until_ess = 250;
  ChainRunSummary summary;
  summary.chains = 1;
  summary.convergence_thresholds = stopping_thresholds(options);
  summary.convergence = judge(summaries, summary.convergence_thresholds);
  const VerdictText text = stopping_verdict_text(summary);
  EXPECT_EQ(text.outcome.rfind("converged: 7 of 10 edge features pass (R-hat < 1.01, bulk ESS > "
                               "250",
                               0),
            0u)
      << text.outcome;
  EXPECT_EQ(text.measures,
            "R-hat: 7 pass, 0 fail, 3 undefined; bulk ESS: 7 pass, 0 fail, 3 undefined; tail "
            "ESS: 7 pass, 0 fail, 3 undefined");
  ASSERT_EQ(text.caveats.size(), 1u);  // one chain
}

}  // namespace
}  // namespace covey
