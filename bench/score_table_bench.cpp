// Score-table lookups: the inner operation of every MCMC proposal (O(1) expected).
#include <benchmark/benchmark.h>

#include <functional>
#include <vector>

#include "covey/random.hpp"
#include "covey/score_table.hpp"

namespace {

covey::ScoreTable make_table(int n, int d) {
  std::vector<covey::Variable> vars;
  for (int v = 0; v < n; ++v) vars.push_back({"X" + std::to_string(v), covey::VariableKind::kDiscrete, {}});
  std::vector<covey::NodeScores> nodes(n);
  covey::Rng rng = covey::make_stream(1, 0);
  for (int v = 0; v < n; ++v) {
    for (int u = 0; u < n; ++u)
      if (u != v) nodes[v].candidates.push_back(u);
    // all subsets of size <= d of the n-1 candidates, by enumerating combinations
    std::vector<int> idx;
    std::function<void(int, covey::ParentMask)> rec = [&](int start, covey::ParentMask m) {
      nodes[v].masks.push_back(m);
      nodes[v].log_scores.push_back(covey::uniform01(rng));
      if (__builtin_popcountll(m) == d) return;
      for (int i = start; i < n - 1; ++i) rec(i + 1, m | (covey::ParentMask{1} << i));
    };
    rec(0, 0);
  }
  return covey::ScoreTable(std::move(vars), std::move(nodes));
}

void BM_ScoreLookup(benchmark::State& state) {
  const int n = static_cast<int>(state.range(0));
  const covey::ScoreTable table = make_table(n, 3);
  covey::Rng rng = covey::make_stream(2, 0);
  std::vector<std::pair<int, covey::ParentMask>> queries;
  for (int i = 0; i < 4096; ++i) {
    const int v = static_cast<int>(covey::uniform_below(rng, n));
    auto sets = table.parent_sets(v);
    queries.emplace_back(v, sets[covey::uniform_below(rng, sets.size())]);
  }
  std::size_t i = 0;
  for (auto _ : state) {
    const auto& [v, m] = queries[i++ & 4095];
    benchmark::DoNotOptimize(table.log_score(v, m));
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_ScoreLookup)->Arg(30);

}  // namespace
