// The best DAG of D_k (docs/mathematics.md section 3) against full enumeration of all DAGs (n = 4,
// 5).
#include <gtest/gtest.h>
#include <tbb/global_control.h>

#include <bit>
#include <cmath>

#include "cover_test_util.hpp"
#include "covey/core/error.hpp"
#include "covey/exact/cover_best.hpp"
#include "covey/graph/cover_class.hpp"

namespace covey {
namespace {

void expect_best_matches_enumeration(const ScoreTable& table, int k) {
  const int n = table.num_variables();
  double best = -INFINITY;
  for_each_dag(table, [&](const Dag& d, double lw) {
    if (lw > best && in_cover_class(d, k)) best = lw;
  });
  if (best == -INFINITY) {  // the class is empty for this table
    EXPECT_THROW(best_dag_in_cover_class(table, k), InputError);
    return;
  }
  const CoverBestResult r = best_dag_in_cover_class(table, k);
  EXPECT_NEAR(r.log_score, best, 1e-9 * std::max(1.0, std::abs(best))) << "n=" << n << " k=" << k;
  EXPECT_TRUE(in_cover_class(r.dag, k));
  EXPECT_DOUBLE_EQ(r.log_score, log_weight(table, r.dag));
  EXPECT_LE(static_cast<int>(r.cover.size()), k);
  std::uint64_t cover = 0;
  for (int v : r.cover) cover |= std::uint64_t{1} << v;
  const auto adj = moral_graph(r.dag);
  for (int v = 0; v < n; ++v)
    if (!((cover >> v) & 1U)) {
      EXPECT_EQ(adj[v] & ~cover, 0u) << "cover misses an edge";
    }
}

TEST(CoverBest, MatchesEnumerationOnRandomFullTables) {
  // Enumeration of every DAG (for_each_dag) is the reference.
  for (int n : {4, 5})
    for (int k = 1; k <= 3; ++k)
      for (std::uint64_t seed : {1, 2, 3}) {
        SCOPED_TRACE("n=" + std::to_string(n) + " k=" + std::to_string(k) +
                     " seed=" + std::to_string(seed));
        expect_best_matches_enumeration(testing_util::random_full_table(n, n - 1, seed), k);
      }
}

TEST(CoverBest, MatchesEnumerationWithMissingSetsAndRequiredEdges) {
  for (int k = 1; k <= 3; ++k) {
    SCOPED_TRACE("k=" + std::to_string(k));
    expect_best_matches_enumeration(cover_testing::restricted_table(5, 2, 7, 0.6), k);
    expect_best_matches_enumeration(cover_testing::restricted_table(5, 3, 8, 0.8, {{0, 1}, {0, 4}}),
                                    k);
    // Disjoint required edges: empty for k = 1.
    expect_best_matches_enumeration(cover_testing::restricted_table(5, 3, 9, 0.8, {{0, 1}, {3, 4}}),
                                    k);
  }
}

TEST(CoverBest, TiesAreBrokenTheSameWayForAnyThreadCount) {
  // All weights equal: every DAG of D_k ties, so only the tie-breaking picks the result.
  const ScoreTable table = testing_util::unit_table(9, 8);
  CoverBestResult one, two;
  {
    tbb::global_control c(tbb::global_control::max_allowed_parallelism, 1);
    one = best_dag_in_cover_class(table, 2);
  }
  {
    tbb::global_control c(tbb::global_control::max_allowed_parallelism, 2);
    two = best_dag_in_cover_class(table, 2);
  }
  EXPECT_EQ(one.dag, two.dag);
  EXPECT_EQ(one.cover, two.cover);
  const ScoreTable random = testing_util::random_full_table(9, 3, 5);
  {
    tbb::global_control c(tbb::global_control::max_allowed_parallelism, 1);
    one = best_dag_in_cover_class(random, 3);
  }
  {
    tbb::global_control c(tbb::global_control::max_allowed_parallelism, 2);
    two = best_dag_in_cover_class(random, 3);
  }
  EXPECT_EQ(one.dag, two.dag);
  EXPECT_EQ(one.log_score, two.log_score);
}

TEST(CoverBest, RejectsBadBoundsAndEmptyClasses) {
  const ScoreTable table = testing_util::random_full_table(4, 3, 1);
  EXPECT_THROW(best_dag_in_cover_class(table, -1), InputError);
  EXPECT_THROW(best_dag_in_cover_class(table, 4), InputError);
  // Required edges 0 -> 1 and 2 -> 3 are disjoint moral edges: no cover of size 1 exists.
  const ScoreTable forced = cover_testing::restricted_table(4, 3, 2, 1.0, {{0, 1}, {2, 3}});
  try {
    best_dag_in_cover_class(forced, 1);
    ADD_FAILURE() << "expected an InputError";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("cover"), std::string::npos);
  }
  EXPECT_NO_THROW(best_dag_in_cover_class(forced, 2));
}

}  // namespace
}  // namespace covey
