#include "chain_start.hpp"

#include <algorithm>
#include <bit>
#include <numeric>

#include "covey/core/error.hpp"
#include "covey/graph/dag.hpp"

namespace covey {

namespace {

// Indices of v's allowed parent sets that avoid `later`, best score first.
std::vector<std::size_t> sets_by_score(const ScoreTable& table, int v, ParentMask later) {
  const auto masks = table.parent_sets(v);
  const auto scores = table.log_scores(v);
  std::vector<std::size_t> out;
  for (std::size_t k = 0; k < masks.size(); ++k)
    if (!(masks[k] & later)) out.push_back(k);
  std::stable_sort(out.begin(), out.end(),
                   [&](std::size_t a, std::size_t b) { return scores[a] > scores[b]; });
  return out;
}

}  // namespace

std::vector<std::uint64_t> greedy_start(const ScoreTable& table, Rng& rng,
                                        const DagClass* restriction) {
  const int n = table.num_variables();
  std::vector<int> order(n), rank(n);
  constexpr int kOrders = 100;
  for (int attempt = 0; attempt < kOrders; ++attempt) {
    std::iota(order.begin(), order.end(), 0);
    for (int i = n - 1; i > 0; --i)
      std::swap(order[i], order[uniform_below(rng, std::uint64_t(i) + 1)]);
    for (int i = 0; i < n; ++i) rank[order[i]] = i;
    Dag dag(n);
    bool feasible = true;
    for (int v = 0; v < n && feasible; ++v) {
      // Candidates placed after v may not be parents.
      const auto cands = table.candidates(v);
      ParentMask later = 0;
      for (std::size_t b = 0; b < cands.size(); ++b)
        if (rank[cands[b]] > rank[v]) later |= ParentMask{1} << b;
      feasible = false;
      for (std::size_t k : sets_by_score(table, v, later)) {
        set_local_parents(table, dag, v, table.parent_sets(v)[k]);
        if (!restriction || restriction->contains(dag)) {
          feasible = true;
          break;
        }
      }
    }
    if (feasible) return dag.words();
  }
  throw OptionError("{start} greedy: no DAG of the score table fits " + std::to_string(kOrders) +
                    " random node orders (required edges?); use {start} FILE");
}

}  // namespace covey
