// The brute-force enumerator that every engine is tested against, itself checked against
// Robinson's counts of labelled DAGs (Robinson 1973; OEIS A003024).
#include <gtest/gtest.h>

#include <set>

#include "covey/graph/enumerate.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

TEST(Enumerate, RobinsonCountsOeisA003024) {
  // OEIS A003024: 1, 1, 3, 25, 543, 29281, 3781503 for n = 0..6.
  const std::uint64_t expected[] = {1, 1, 3, 25, 543, 29281, 3781503};
  for (int n = 0; n <= 6; ++n) {
    std::uint64_t acyclic = 0;
    const auto count = for_each_dag(
        n, [](int, std::uint64_t) { return true; },
        [&](const Dag& d) { acyclic += is_acyclic(d); });
    EXPECT_EQ(count, expected[n]) << "n=" << n;
    EXPECT_EQ(acyclic, count) << "n=" << n;
  }
}

TEST(Enumerate, EachDagOnceAndFilterRespected) {
  std::set<std::vector<std::uint64_t>> seen;
  const auto count = for_each_dag(
      4, [](int, std::uint64_t s) { return __builtin_popcountll(s) <= 1; },
      [&](const Dag& d) {
        for (auto p : d.words()) EXPECT_LE(__builtin_popcountll(p), 1);
        EXPECT_TRUE(seen.insert(d.words()).second);
      });
  EXPECT_EQ(count, seen.size());
  // Labelled forests of rooted trees, i.e. DAGs with in-degree <= 1: (n+1)^(n-1) = 125 for n = 4
  // (Cayley's formula for rooted forests; common practice).
  EXPECT_EQ(count, 125u);
}

TEST(Enumerate, TableVersionGivesWeights) {
  const ScoreTable t = testing_util::random_full_table(4, 2, 3);
  std::uint64_t visited = 0;
  for_each_dag(t, [&](const Dag& d, double lw) {
    ++visited;
    EXPECT_DOUBLE_EQ(lw, log_weight(t, d));
  });
  std::uint64_t direct = 0;
  for_each_dag(
      4, [](int, std::uint64_t s) { return __builtin_popcountll(s) <= 2; },
      [&](const Dag&) { ++direct; });
  EXPECT_EQ(visited, direct);
}

}  // namespace
}  // namespace covey
