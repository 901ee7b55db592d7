// The exact engine over all DAGs, checked against outside standards: Robinson's DAG counts
// (Robinson 1973; OEIS A003024), Robinson's recurrence in exact integer arithmetic, and brute-force
// enumeration of every DAG (covey's for_each_dag, itself checked against OEIS A003024).
#include "covey/exact_posterior.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <map>

#include "covey/enumerate.hpp"
#include "covey/logmath.hpp"
#include "covey/random.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::random_full_table;
using testing_util::unit_table;

// Everything the engine reports, by enumeration of all DAGs of the table.
struct Enumerated {
  int n = 0;
  double log_z = kNegInf;
  std::vector<double> edge, ancestor;
  std::map<std::vector<std::uint64_t>, double> probability;  // by parent masks
};

Enumerated enumerate_posterior(const ScoreTable& table) {
  Enumerated e;
  e.n = table.num_variables();
  const int n = e.n;
  LogSumAccumulator z;
  std::vector<std::pair<Dag, double>> all;
  for_each_dag(table, [&](const Dag& d, double lw) {
    z.add(lw);
    all.emplace_back(d, lw);
  });
  e.log_z = z.value();
  e.edge.assign(n * n, 0.0);
  e.ancestor.assign(n * n, 0.0);
  std::vector<long double> edge(n * n, 0), anc(n * n, 0);
  for (const auto& [d, lw] : all) {
    const long double p = std::exp(static_cast<long double>(lw - e.log_z));
    e.probability[d.parents] = static_cast<double>(p);
    const auto am = ancestor_masks(d);
    for (int v = 0; v < n; ++v)
      for (int u = 0; u < n; ++u) {
        if (d.has_edge(u, v)) edge[u * n + v] += p;
        if ((am[v] >> u) & 1U) anc[u * n + v] += p;
      }
  }
  for (int i = 0; i < n * n; ++i) {
    e.edge[i] = static_cast<double>(edge[i]);
    e.ancestor[i] = static_cast<double>(anc[i]);
  }
  return e;
}

void expect_matches_enumeration(const ScoreTable& table, ExactRoute route,
                                const std::string& what) {
  const Enumerated e = enumerate_posterior(table);
  ExactOptions options;
  options.route = route;
  const ExactEngine engine(table, options);
  const ExactPosterior& p = engine.posterior();
  const int n = table.num_variables();
  EXPECT_NEAR(p.log_total_weight, e.log_z, 1e-9) << what;
  for (int u = 0; u < n; ++u)
    for (int v = 0; v < n; ++v) {
      EXPECT_NEAR(p.edge(u, v), e.edge[u * n + v], 1e-9) << what << " edge " << u << "->" << v;
      EXPECT_NEAR(p.ancestor(u, v), e.ancestor[u * n + v], 1e-9)
          << what << " ancestor " << u << "~>" << v;
      if (u < v) {
        EXPECT_NEAR(p.adjacency(u, v), e.edge[u * n + v] + e.edge[v * n + u], 1e-9)
            << what << " adjacency " << u << "-" << v;
      }
    }
  EXPECT_LT(p.discrepancy, 1e-12) << what;
}

TEST(ExactPosterior, RandomFullTablesMatchEnumeration) {
  // Source: brute-force enumeration of all DAGs (for_each_dag).
  for (int n = 1; n <= 5; ++n)
    for (ExactRoute route : {ExactRoute::kLayered, ExactRoute::kSigned})
      expect_matches_enumeration(random_full_table(n, n - 1, 100 + n), route,
                                 "n=" + std::to_string(n) + " " + to_string(route));
}

}  // namespace
}  // namespace covey
