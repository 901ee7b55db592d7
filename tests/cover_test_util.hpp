#pragma once
// Helpers shared by the cover-bounded engine tests: score tables with missing parent sets,
// full enumeration with weights, and a pooled chi-square test.
#include <algorithm>
#include <bit>
#include <boost/math/distributions/chi_squared.hpp>
#include <cmath>
#include <map>
#include <utility>
#include <vector>

#include "covey/core/random.hpp"
#include "covey/graph/enumerate.hpp"
#include "covey/scores/score_table.hpp"
#include "test_util.hpp"

namespace covey::cover_testing {

// A random table (scores as testing_util::random_full_table) keeping only some parent sets:
// those of size <= max_indegree, each kept with probability `keep` (the empty set always, unless
// `required` asks for an edge), and for each (u, v) in `required` only the sets of v holding u.
inline ScoreTable restricted_table(int n, int max_indegree, std::uint64_t seed, double keep,
                                   const std::vector<std::pair<int, int>>& required = {}) {
  const ScoreTable full = testing_util::random_full_table(n, n - 1, seed);
  Rng rng = make_stream(seed, 99);
  std::vector<Variable> vars = full.variables();
  std::vector<NodeScores> nodes(n);
  for (int v = 0; v < n; ++v) {
    nodes[v].candidates.assign(full.candidates(v).begin(), full.candidates(v).end());
    std::uint64_t must = 0;
    for (auto [u, w] : required)
      if (w == v) must |= std::uint64_t{1} << u;
    const auto sets = full.global_parent_sets(v);
    for (std::size_t i = 0; i < sets.size(); ++i) {
      const std::uint64_t g = sets[i];
      const bool drop_ok = uniform01(rng) >= keep;
      if (std::popcount(g) > max_indegree || (g & must) != must) continue;
      if (g != must && drop_ok) continue;
      nodes[v].masks.push_back(full.parent_sets(v)[i]);
      nodes[v].log_scores.push_back(full.log_scores(v)[i]);
    }
  }
  return ScoreTable(std::move(vars), std::move(nodes));
}

struct Enumeration {
  std::vector<Dag> dags;
  std::vector<double> log_weights;
  std::map<std::vector<std::uint64_t>, std::size_t> index;
};

inline Enumeration enumerate_all(const ScoreTable& table) {
  Enumeration e;
  for_each_dag(table, [&](const Dag& d, double lw) {
    e.index[d.words()] = e.dags.size();
    e.dags.push_back(d);
    e.log_weights.push_back(lw);
  });
  return e;
}

// Pearson's chi-square test of observed counts against expected probabilities (summing to 1),
// with the cells of expected count < 5 pooled into one (common practice). Returns the p-value,
// from Boost.Math's chi-squared distribution.
inline double chi_square_p_value(const std::vector<double>& probabilities,
                                 const std::vector<std::uint64_t>& observed, std::uint64_t total,
                                 int* degrees_of_freedom = nullptr) {
  double stat = 0, pool_expected = 0, pool_observed = 0;
  int cells = 0;
  for (std::size_t i = 0; i < probabilities.size(); ++i) {
    const double e = probabilities[i] * double(total);
    if (e >= 5) {
      stat += (double(observed[i]) - e) * (double(observed[i]) - e) / e;
      ++cells;
    } else {
      pool_expected += e;
      pool_observed += double(observed[i]);
    }
  }
  if (pool_expected > 0) {
    stat += (pool_observed - pool_expected) * (pool_observed - pool_expected) /
            std::max(pool_expected, 1e-300);
    ++cells;
  }
  const int df = std::max(cells - 1, 1);
  if (degrees_of_freedom) *degrees_of_freedom = df;
  boost::math::chi_squared dist(df);
  return boost::math::cdf(boost::math::complement(dist, stat));
}

}  // namespace covey::cover_testing
