#pragma once
// Helpers of the exact-engine tests: tables derived from the shared random tables (sets
// dropped, scores stretched), posteriors by enumeration, and Pearson's chi-square test.
#include <boost/math/distributions/chi_squared.hpp>
#include <cmath>
#include <functional>
#include <map>
#include <vector>

#include "covey/core/logmath.hpp"
#include "covey/graph/dag.hpp"
#include "covey/graph/enumerate.hpp"
#include "covey/scores/score_table.hpp"

namespace covey::exact_testing {

// A copy of `base` keeping the parent sets that pass `keep`, with every log score times `scale`.
inline ScoreTable derive_table(const ScoreTable& base,
                               const std::function<bool(int v, std::uint64_t global)>& keep,
                               double scale = 1.0) {
  std::vector<NodeScores> nodes(base.num_variables());
  for (int v = 0; v < base.num_variables(); ++v) {
    const auto c = base.candidates(v);
    nodes[v].candidates.assign(c.begin(), c.end());
    const auto masks = base.parent_sets(v);
    const auto scores = base.log_scores(v);
    for (std::size_t i = 0; i < masks.size(); ++i) {
      if (!keep(v, base.to_global(v, masks[i]))) continue;
      nodes[v].masks.push_back(masks[i]);
      nodes[v].log_scores.push_back(scale * scores[i]);
    }
  }
  return ScoreTable(base.variables(), std::move(nodes));
}

// Everything the exact engine reports, by enumeration of all DAGs of the table.
struct Enumerated {
  int n = 0;
  double log_z = kNegInf;
  std::vector<double> edge, ancestor;                        // [u * n + v]
  std::map<std::vector<std::uint64_t>, double> probability;  // by parent masks
};

inline Enumerated enumerate_posterior(const ScoreTable& table) {
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
  std::vector<long double> edge(n * n, 0), anc(n * n, 0);
  for (const auto& [d, lw] : all) {
    const long double p = std::exp(static_cast<long double>(lw - e.log_z));
    e.probability[d.words()] = static_cast<double>(p);
    const auto am = ancestor_masks(d);
    for (int v = 0; v < n; ++v)
      for (int u = 0; u < n; ++u) {
        if (d.has_edge(u, v)) edge[u * n + v] += p;
        if ((am[v] >> u) & 1U) anc[u * n + v] += p;
      }
  }
  e.edge.assign(edge.begin(), edge.end());
  e.ancestor.assign(anc.begin(), anc.end());
  return e;
}

struct ChiSquare {
  double statistic = 0;
  int degrees_of_freedom = 0;
  double p_value = 1;
  std::size_t outside = 0;  // draws that are not DAGs of the table
};

// Pearson's chi-square of the draws against the enumerated probabilities; cells expected to hold
// fewer than 5 draws are pooled into one (common practice). p from Boost.Math's chi-squared.
inline ChiSquare chi_square(const std::vector<Dag>& draws, const Enumerated& e) {
  std::map<std::vector<std::uint64_t>, std::size_t> counts;
  ChiSquare r;
  for (const Dag& d : draws) {
    if (!e.probability.count(d.words()))
      ++r.outside;
    else
      ++counts[d.words()];
  }
  const double total = static_cast<double>(draws.size());
  double pooled_expected = 0, pooled_observed = 0;
  int cells = 0;
  for (const auto& [dag, p] : e.probability) {
    const double expected = p * total;
    const auto it = counts.find(dag);
    const double observed = it == counts.end() ? 0.0 : static_cast<double>(it->second);
    if (expected < 5) {
      pooled_expected += expected;
      pooled_observed += observed;
      continue;
    }
    r.statistic += (observed - expected) * (observed - expected) / expected;
    ++cells;
  }
  if (pooled_expected > 0) {
    r.statistic +=
        (pooled_observed - pooled_expected) * (pooled_observed - pooled_expected) / pooled_expected;
    ++cells;
  }
  r.degrees_of_freedom = std::max(cells - 1, 1);
  boost::math::chi_squared_distribution<double> dist(r.degrees_of_freedom);
  r.p_value = boost::math::cdf(boost::math::complement(dist, r.statistic));
  return r;
}

}  // namespace covey::exact_testing
