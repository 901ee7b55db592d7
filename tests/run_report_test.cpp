// run_report.hpp: the report's comparison with another posterior and its request checks.
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "covey/core/error.hpp"
#include "covey/exact/exact_posterior.hpp"
#include "covey/report/run_report.hpp"
#include "covey/scores/score_io.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

TEST(RunReport, ComparesTheRunsEdgesWithTheOtherPosterior) {
  testing_util::TempDir dir;
  const ScoreTable table = testing_util::random_full_table(4, 3, 31);
  write_scores_hdf5(table, dir.file("t.h5"));
  CompareOptions co;
  co.kinds = FeatureKinds{true, false, false, false};
  const PosteriorEstimate exact = PosteriorEstimate::load({dir.file("t.h5")}, co);
  // Diagnostics of a pretend run: two edges and an adjacency (which the comparison skips).
  RunDiagnostics d;
  d.features = {
      {FeatureKind::kEdge, 0, 1}, {FeatureKind::kAdjacency, 0, 1}, {FeatureKind::kEdge, 2, 3}};
  d.summaries = {{0.25, 1, 100, 100, 100, 0.01},
                 {0.5, 1, 100, 100, 100, 0.02},
                 {0.75, 1, 100, 100, 100, 0.03}};
  const Comparison c = compare_run_edges(d, exact, "chain run (r.h5)");
  EXPECT_EQ(c.label_a, "chain run (r.h5)");
  EXPECT_EQ(c.label_b, exact.label());
  ASSERT_EQ(c.pairs.size(), 2u);
  const ExactEngine engine(table, ExactOptions{});
  EXPECT_EQ(c.pairs[0].from, 0);
  EXPECT_EQ(c.pairs[0].to, 1);
  EXPECT_EQ(c.pairs[0].a, 0.25);
  EXPECT_EQ(c.pairs[0].se_a, 0.01);
  EXPECT_DOUBLE_EQ(c.pairs[0].b, engine.posterior().edge(0, 1));
  EXPECT_TRUE(std::isnan(c.pairs[0].se_b));  // exact: no standard error
  EXPECT_EQ(c.pairs[1].from, 2);
  EXPECT_EQ(c.pairs[1].a, 0.75);
  EXPECT_DOUBLE_EQ(c.pairs[1].b, engine.posterior().edge(2, 3));
}

TEST(RunReport, RequestChecksNameTheFieldBeforeOpeningFiles) {
  RunReportRequest request;
  request.runs = {"missing.h5"};
  request.consensus = 1.5;
  try {
    run_report_data(request);
    ADD_FAILURE() << "expected an OptionError";
  } catch (const OptionError& e) {
    EXPECT_STREQ(e.what(), "report: consensus must lie in [0, 1), got 1.5");
  }
  request.consensus = 0.5;
  request.thresholds.max_rhat = 0.9;
  EXPECT_THROW(run_report_data(request), OptionError);
  request.thresholds.max_rhat = 1.01;
  EXPECT_THROW(run_report_data(request), InputError);  // the missing run file
  EXPECT_STREQ(to_string(ConvergenceVerdict::State::kNotConverged), "not converged");
}

}  // namespace
}  // namespace covey
