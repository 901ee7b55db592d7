// The posterior mass of a class of DAGs (docs/mathematics.md section 7), exact by enumeration or
// estimated from exact draws with the Wilson interval; the interval itself against R's prop.test.
#include <gtest/gtest.h>

#include <bit>
#include <cmath>
#include <fstream>
#include <sstream>

#include "covey/core/error.hpp"
#include "covey/core/proportion.hpp"
#include "covey/exact/cover_draws.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "covey/exact/exact_posterior.hpp"
#include "covey/graph/cover_class.hpp"
#include "exact_test_util.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::random_full_table;

TEST(Proportion, WilsonMatchesRPropTest) {
  // Source: R's prop.test(x, n, correct = FALSE), whose interval is the Wilson score interval.
  const std::vector<std::pair<int, int>> cases = {
      {0, 1000}, {7, 20}, {50, 1000}, {999, 1000}, {1, 3}};
  std::string script = "for (xn in list(";
  for (std::size_t i = 0; i < cases.size(); ++i)
    script += (i ? ",c(" : "c(") + std::to_string(cases[i].first) + "," +
              std::to_string(cases[i].second) + ")";
  script +=
      ")) { ci <- prop.test(xn[1], xn[2], correct=FALSE)$conf.int; "
      "cat(sprintf('%.17g %.17g\\n', ci[1], ci[2])) }";
  testing_util::TempDir dir;
  std::ofstream(dir.file("wilson.R")) << script << "\n";
  const auto r = testing_util::run_shell(std::string(COVEY_RSCRIPT) + " " + dir.file("wilson.R"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::istringstream in(r.out);
  for (const auto& [x, n] : cases) {
    double lo = -1, hi = -1;
    in >> lo >> hi;
    ASSERT_TRUE(in) << r.out;
    const ProportionInterval ci = wilson_interval(x, n);
    EXPECT_NEAR(ci.lo, lo, 1e-12) << x << "/" << n;
    EXPECT_NEAR(ci.hi, hi, 1e-12) << x << "/" << n;
  }
}

TEST(ClassMass, EnumerationAndDrawsAgreeWithDirectSums) {
  // A class with a known membership test (at most three edges); source: enumeration of all DAGs
  // summed directly, and for the draws the Wilson interval must cover that exact mass.
  const ScoreTable t = random_full_table(5, 3, 1100);
  const DagPredicate sparse = [](const Dag& d) { return d.num_edges() <= 3; };
  const auto e = exact_testing::enumerate_posterior(t);
  double direct = 0;
  std::size_t count = 0;
  for (const auto& [parents, p] : e.probability) {
    Dag d(5);
    for (int v = 0; v < 5; ++v) d.parent_mask(v) = parents[std::size_t(v)];
    if (sparse(d)) {
      direct += p;
      ++count;
    }
  }
  const ClassMass exact = class_mass_by_enumeration(t, sparse);
  EXPECT_EQ(exact.method, "enumeration");
  EXPECT_NEAR(exact.estimate, direct, 1e-12);
  EXPECT_EQ(exact.inside, count);
  EXPECT_GT(direct, 0.05);
  EXPECT_LT(direct, 0.95);

  ExactOptions options;
  options.draws = true;
  const ExactEngine engine(t, options);
  const ClassMass est = class_mass_from_draws(engine.draw_many(20000, 12), sparse);
  EXPECT_EQ(est.method, "exact-draws");
  EXPECT_EQ(est.draws, 20000u);
  EXPECT_LE(est.lo, direct);
  EXPECT_GE(est.hi, direct);
  EXPECT_LT(est.hi - est.lo, 0.02);
  EXPECT_THROW(class_mass_from_draws({}, sparse), InputError);
}

TEST(ClassMass, CoverMassTimesTotalAgreesWithTheCoverEngineAtEightVariables) {
  // Two independent routes to log Z_2 at n = 8 (beyond enumeration of every DAG): the exact
  // all-DAG engine's log Z plus the log of D_2's mass estimated from its exact draws (Wilson
  // interval), and the cover-bounded engine's U * accepted / trials (docs/mathematics.md section
  // 4). A factor lost on either route (say the 2^k of the split multiplicity) would put them far
  // apart. Random scores with an extra 1.5 nats per parent, so that sparse DAGs (most of them in
  // D_2) carry a real share of the posterior.
  const ScoreTable base = random_full_table(8, 3, 1200);
  std::vector<NodeScores> nodes(8);
  for (int v = 0; v < 8; ++v) {
    const auto masks = base.parent_sets(v);
    const auto scores = base.log_scores(v);
    nodes[v].candidates.assign(base.candidates(v).begin(), base.candidates(v).end());
    nodes[v].masks.assign(masks.begin(), masks.end());
    for (std::size_t i = 0; i < masks.size(); ++i)
      nodes[v].log_scores.push_back(scores[i] - 1.5 * std::popcount(masks[i]));
  }
  const ScoreTable t(base.variables(), std::move(nodes));
  ExactOptions options;
  options.draws = true;
  const ExactEngine engine(t, options);
  const std::vector<Dag> draws = engine.draw_many(40000, 5);
  const ClassMass mass = cover_class_mass(t, 2, draws);
  ASSERT_EQ(mass.method, "exact-draws");
  // The class holds a real share of the posterior, so the comparison is not vacuous.
  ASSERT_GT(mass.estimate, 0.05);
  ASSERT_LT(mass.estimate, 0.95);
  std::size_t inside = 0;
  for (const Dag& d : draws) inside += in_cover_class(d, 2) ? 1 : 0;
  EXPECT_EQ(mass.inside, inside);

  const double log_z = engine.log_total_weight();
  const double exact_lo = log_z + std::log(mass.lo), exact_hi = log_z + std::log(mass.hi);
  const double exact_estimate = log_z + std::log(mass.estimate);

  const CoverSampler sampler = CoverSampler::build(t, 2);
  const CoverDrawBatch batch = draw_cover_batch(sampler, 6, 40000, false);
  const LogTotalWeightEstimate cover =
      estimate_log_total_weight(sampler.log_upper_bound(), batch.dags.size(), batch.trials);

  // The exact side's interval is the wider one (D_2 holds a small share, so few of the exact draws
  // land in it): it must cover the cover engine's estimate, the intervals must overlap, and the
  // difference must stay within 4 combined standard errors (each SE read off its 95% interval).
  EXPECT_LE(exact_lo, cover.log_estimate);
  EXPECT_GE(exact_hi, cover.log_estimate);
  EXPECT_LE(std::max(exact_lo, cover.log_lo), std::min(exact_hi, cover.log_hi));
  const double se_exact = (exact_hi - exact_lo) / (2 * 1.959964);
  const double se_cover = (cover.log_hi - cover.log_lo) / (2 * 1.959964);
  EXPECT_LT(std::abs(cover.log_estimate - exact_estimate), 4 * std::hypot(se_exact, se_cover));
}

// A tiny mass of D_k from the cover engine (Z_k / Z) against enumeration at n = 6, where exact
// draws over all DAGs would find none inside: its 95% interval covers the enumerated mass, and
// the text shows it as a power of ten, never as 0.
TEST(ClassMass, TinyCoverMassFromTheCoverEngineMatchesEnumeration) {
  const ScoreTable table = testing_util::dense_full_table(6, 31);
  const ClassMass exact =
      class_mass_by_enumeration(table, [](const Dag& d) { return in_cover_class(d, 1); });
  ASSERT_GT(exact.estimate, 0.0);
  ASSERT_LT(exact.estimate, 1e-6) << "the table should leave D_1 a tiny mass";
  const double log_z = ExactEngine(table).log_total_weight();
  const ClassMass m = cover_class_mass_from_weights(table, 1, log_z, 7, 4000);
  EXPECT_EQ(m.method, "cover-engine");
  // (With k = 1 nearly every DAG has one split, so nearly every trial is accepted and the upper
  // end, U / Z, meets the exact value up to rounding.)
  EXPECT_LE(m.log_lo, exact.log_estimate + 1e-9);
  EXPECT_GE(m.log_hi, exact.log_estimate - 1e-9);
  EXPECT_LT(m.log_hi - m.log_lo, 0.2);  // 4,000 accepted draws: a tight interval
  const std::string text = format_probability(m.estimate, m.log_estimate);
  EXPECT_EQ(text.rfind("10^-", 0), 0u) << text;
  EXPECT_EQ(format_probability(0.25, std::log(0.25)), "0.250000");
}

}  // namespace
}  // namespace covey
