// The exact engine over all DAGs, checked against outside standards: Robinson's DAG counts
// (Robinson 1973; OEIS A003024), Robinson's recurrence in exact integer arithmetic, and brute-force
// enumeration of every DAG (for_each_dag, itself checked against OEIS A003024).
#include "covey/exact/exact_posterior.hpp"

#include <gtest/gtest.h>
#include <tbb/global_control.h>

#include <cmath>

#include "covey/core/error.hpp"
#include "covey/core/random.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "exact_test_util.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using exact_testing::derive_table;
using exact_testing::enumerate_posterior;
using exact_testing::Enumerated;
using testing_util::random_full_table;
using testing_util::unit_table;

const ExactRoute kRoutes[] = {ExactRoute::kLayered, ExactRoute::kSigned};

ExactEngine engine_on(const ScoreTable& table, ExactRoute route) {
  ExactOptions options;
  options.route = route;
  return ExactEngine(table, options);
}

void expect_matches_enumeration(const ScoreTable& table, const std::string& what,
                                double tolerance = 1e-9) {
  const Enumerated e = enumerate_posterior(table);
  const int n = table.num_variables();
  for (ExactRoute route : kRoutes) {
    const ExactEngine engine = engine_on(table, route);
    const ExactPosterior& p = engine.posterior();
    const std::string where = what + " (" + to_string(route) + ")";
    EXPECT_NEAR(p.log_total_weight, e.log_z, tolerance) << where;
    for (int u = 0; u < n; ++u)
      for (int v = 0; v < n; ++v) {
        EXPECT_NEAR(p.edge(u, v), e.edge[u * n + v], tolerance)
            << where << " edge " << u << "->" << v;
        EXPECT_NEAR(p.ancestor(u, v), e.ancestor[u * n + v], tolerance)
            << where << " ancestor " << u << "~>" << v;
        if (u < v) {
          EXPECT_NEAR(p.adjacency(u, v), e.edge[u * n + v] + e.edge[v * n + u], tolerance)
              << where << " adjacency " << u << "-" << v;
        }
      }
    EXPECT_LT(p.discrepancy, 1e-10) << where;
  }
}

TEST(ExactPosterior, RobinsonCountsOeisA003024) {
  // OEIS A003024 (Robinson 1973): labelled DAGs on n = 1..7 vertices.
  const double expected[] = {1, 3, 25, 543, 29281, 3781503, 1138779265};
  for (int n = 1; n <= 7; ++n)
    for (ExactRoute route : kRoutes) {
      const ExactEngine engine = engine_on(unit_table(n, n - 1), route);
      EXPECT_EQ(std::round(std::exp(engine.log_total_weight())), expected[n - 1])
          << "n=" << n << " " << to_string(route);
    }
}

TEST(ExactPosterior, RobinsonRecurrenceInExactIntegersUpTo12) {
  // Robinson's recurrence a_m = sum_k (-1)^(k+1) C(m,k) 2^(k(m-k)) a_(m-k) (Robinson 1973) in
  // 128-bit integers: an exact reference independent of the engine's floating point.
  std::vector<__int128> a(13, 0);
  a[0] = 1;
  for (int m = 1; m <= 12; ++m) {
    __int128 binom = 1;
    for (int k = 1; k <= m; ++k) {
      binom = binom * (m - k + 1) / k;
      const __int128 term = binom * (static_cast<__int128>(1) << (k * (m - k))) * a[m - k];
      a[m] += (k % 2) ? term : -term;
    }
  }
  for (int n : {8, 10, 12})
    for (ExactRoute route : kRoutes) {
      const ExactEngine engine = engine_on(unit_table(n, n - 1), route);
      const double exact_log = std::log(static_cast<long double>(a[n]));
      EXPECT_NEAR(engine.log_total_weight(), exact_log, 1e-12 * exact_log)
          << "n=" << n << " " << to_string(route);
      // Uniform weights: every edge has the same probability, and u -> v and v -> u are
      // symmetric, so all n(n-1) edge probabilities agree.
      const ExactPosterior& p = engine.posterior();
      for (int u = 0; u < n; ++u)
        for (int v = 0; v < n; ++v)
          if (u != v) {
            EXPECT_NEAR(p.edge(u, v), p.edge(0, 1), 1e-12);
          }
    }
}

TEST(ExactPosterior, RandomFullTablesMatchEnumeration) {
  // Source: brute-force enumeration of all DAGs (for_each_dag).
  for (int n = 1; n <= 5; ++n)
    expect_matches_enumeration(random_full_table(n, n - 1, 100 + n), "full n=" + std::to_string(n));
}

TEST(ExactPosterior, InDegreeBoundedTablesMatchEnumeration) {
  // Source: brute-force enumeration of all DAGs (for_each_dag).
  for (int d = 0; d <= 3; ++d)
    expect_matches_enumeration(random_full_table(5, d, 200 + d), "n=5 d=" + std::to_string(d));
}

TEST(ExactPosterior, TablesWithMissingSetsMatchEnumeration) {
  // Source: brute-force enumeration. Random parent sets dropped; odd vertices lose the empty set
  // (they must have a parent); vertex 4 may never have 0 as a parent (a forbidden edge).
  Rng rng = make_stream(31, 0);
  const ScoreTable base = random_full_table(5, 4, 300);
  const ScoreTable t = derive_table(base, [&](int v, std::uint64_t s) {
    if (s == 0) return v % 2 == 0;
    if (v == 4 && (s & 1U)) return false;
    return uniform01(rng) < 0.6;
  });
  std::uint64_t count = 0;
  for_each_dag(t, [&](const Dag&, double) { ++count; });
  ASSERT_GT(count, 100u);
  expect_matches_enumeration(t, "missing sets");
}

TEST(ExactPosterior, WideScoreRangesMatchEnumeration) {
  // Scores stretched by 3000 (spreads of thousands of nats, as with very large data sets): the
  // per-subset scales must keep every sum in range. Source: brute-force enumeration, in logs.
  expect_matches_enumeration(
      derive_table(
          random_full_table(5, 3, 400), [](int, std::uint64_t) { return true; }, 3000.0),
      "stretched", 1e-8);
}

TEST(ExactPosterior, RoutesAgreeAtTenVariables) {
  // Two independent exact computations (positive layer DP; signed inclusion-exclusion) must
  // agree beyond enumeration's reach. Source: the other route.
  const ScoreTable t = random_full_table(10, 3, 500);
  const ExactPosterior a = engine_on(t, ExactRoute::kLayered).posterior();
  const ExactPosterior b = engine_on(t, ExactRoute::kSigned).posterior();
  EXPECT_NEAR(a.log_total_weight, b.log_total_weight, 1e-11);
  for (std::size_t i = 0; i < a.edge_probability.size(); ++i) {
    EXPECT_NEAR(a.edge_probability[i], b.edge_probability[i], 1e-11) << i;
    EXPECT_NEAR(a.ancestor_probability[i], b.ancestor_probability[i], 1e-11) << i;
  }
  // Every edge implies the ancestor relation (common practice: a path of length one).
  for (std::size_t i = 0; i < a.edge_probability.size(); ++i)
    EXPECT_LE(a.edge_probability[i], a.ancestor_probability[i] + 1e-12);
}

TEST(ExactPosterior, SignedRouteCancellationShowsInDiscrepancy) {
  // The adversarial case of the sink recurrence: nearly all mass on the empty graph, so the
  // alternating sums cancel almost 2^n-fold. Source: the layered route (positive sums only).
  const ScoreTable t = random_full_table(10, 3, 550);
  std::vector<NodeScores> nodes(10);
  for (int v = 0; v < 10; ++v) {
    const auto c = t.candidates(v);
    nodes[v].candidates.assign(c.begin(), c.end());
    const auto masks = t.parent_sets(v);
    const auto scores = t.log_scores(v);
    nodes[v].masks.assign(masks.begin(), masks.end());
    for (std::size_t i = 0; i < masks.size(); ++i)
      nodes[v].log_scores.push_back(scores[i] + (masks[i] == 0 ? 30.0 : 0.0));
  }
  const ScoreTable skewed(t.variables(), std::move(nodes));
  const ExactPosterior a = engine_on(skewed, ExactRoute::kLayered).posterior();
  const ExactPosterior b = engine_on(skewed, ExactRoute::kSigned).posterior();
  double worst = 0;
  for (std::size_t i = 0; i < a.ancestor_probability.size(); ++i) {
    worst = std::max(worst, std::abs(a.ancestor_probability[i] - b.ancestor_probability[i]));
    worst = std::max(worst, std::abs(a.edge_probability[i] - b.edge_probability[i]));
  }
  EXPECT_LT(a.discrepancy, 1e-12);               // positive sums stay at rounding level
  EXPECT_LT(worst, 1e-9);                        // docs/exact-engine.md: about 2^n ulp at worst
  EXPECT_LE(worst, 10 * b.discrepancy + 1e-14);  // and the indicator shows it
}

TEST(ExactPosterior, SignedTotalWeightAloneMatchesEngine) {
  // Source: enumeration (n = 5) and the layered route (n = 9).
  const ScoreTable small = random_full_table(5, 4, 600);
  EXPECT_NEAR(exact_log_total_weight_signed(small), enumerate_posterior(small).log_z, 1e-10);
  const ScoreTable t = random_full_table(9, 3, 601);
  long long clamped = -1;
  EXPECT_NEAR(exact_log_total_weight_signed(t, &clamped),
              engine_on(t, ExactRoute::kLayered).log_total_weight(), 1e-11);
  EXPECT_EQ(clamped, 0);
}

TEST(ExactPosterior, SameResultsForAnyThreadCount) {
  const ScoreTable t = random_full_table(8, 3, 700);
  std::vector<ExactPosterior> runs;
  for (int threads : {1, 2}) {
    tbb::global_control limit(tbb::global_control::max_allowed_parallelism, threads);
    for (ExactRoute route : kRoutes) runs.push_back(engine_on(t, route).posterior());
  }
  for (int r = 0; r < 2; ++r) {
    EXPECT_EQ(runs[r].log_total_weight, runs[r + 2].log_total_weight);
    EXPECT_EQ(runs[r].edge_probability, runs[r + 2].edge_probability);
    EXPECT_EQ(runs[r].ancestor_probability, runs[r + 2].ancestor_probability);
  }
}

// The exact writers refuse an existing file unless asked to replace it (the CLI's --force).
TEST(ExactPosterior, WritersRefuseAnExistingFileUnlessOverwrite) {
  const ScoreTable t = random_full_table(4, 2, 701);
  ExactOptions options;
  options.draws = true;
  const ExactEngine engine(t, options);
  const std::vector<Dag> dags = engine.draw_many(20, 3);
  const CoverSampler sampler = CoverSampler::build(t, 1);
  testing_util::TempDir dir;
  const std::string draws = dir.file("draws.h5"), saved = dir.file("sampler.h5");
  for (const std::string& path : {draws, saved}) testing_util::write_file(path, "keep\n");
  EXPECT_THROW(write_exact_draws(draws, t, engine, dags, 3, "test"), OptionError);
  EXPECT_THROW(sampler.save(saved), OptionError);
  for (const std::string& path : {draws, saved}) EXPECT_EQ(testing_util::read_file(path), "keep\n");
  write_exact_draws(draws, t, engine, dags, 3, "test", true);
  sampler.save(saved, true);
  EXPECT_NE(testing_util::read_file(draws), "keep\n");
  EXPECT_EQ(CoverSampler::load(saved, t).cover_bound(), 1);
}

TEST(ExactPosterior, NoDagInTableIsAnInputError) {
  // 0 may only have parent 1 and 1 only parent 0: every choice closes a cycle.
  const ScoreTable base = random_full_table(3, 2, 800);
  const ScoreTable t = derive_table(base, [](int v, std::uint64_t s) {
    if (v == 0) return s == 0b010;
    if (v == 1) return s == 0b001;
    return true;
  });
  for (ExactRoute route : kRoutes) {
    try {
      engine_on(t, route);
      ADD_FAILURE() << "expected an InputError";
    } catch (const InputError& e) {
      EXPECT_NE(std::string(e.what()).find("no DAG"), std::string::npos) << e.what();
    }
  }
}

TEST(ExactPosterior, TooLargeIsRefusedWithEstimates) {
  // Refused before any allocation, naming the size, the time and memory estimates and the limits.
  try {
    plan_exact(40, ExactRoute::kAuto, false, ExactLimits{});
    ADD_FAILURE() << "expected a ResourceError";
  } catch (const ResourceError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find("40 variables"), std::string::npos) << m;
    EXPECT_NE(m.find("GiB"), std::string::npos) << m;
  }
  ExactLimits tight;
  tight.max_bytes = std::size_t{64} << 20;
  try {
    plan_exact(16, ExactRoute::kAuto, true, tight);
    ADD_FAILURE() << "expected a ResourceError";
  } catch (const ResourceError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find("exact draws for 16 variables"), std::string::npos) << m;
    EXPECT_NE(m.find("64.00 MiB"), std::string::npos) << m;
  }
  // Without draws the signed route takes over where the layer table does not fit.
  EXPECT_EQ(plan_exact(16, ExactRoute::kAuto, false, tight).route, ExactRoute::kSigned);
  EXPECT_EQ(plan_exact(12, ExactRoute::kAuto, true, ExactLimits{}).route, ExactRoute::kLayered);
  // Estimates grow with n on both routes.
  for (ExactRoute route : kRoutes)
    for (int n = 2; n < 24; ++n) {
      EXPECT_LT(estimate_exact_cost(n, route, false).seconds,
                estimate_exact_cost(n + 1, route, false).seconds);
      EXPECT_LT(estimate_exact_cost(n, route, false).bytes,
                estimate_exact_cost(n + 1, route, false).bytes);
    }
}

}  // namespace
}  // namespace covey
