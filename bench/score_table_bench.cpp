// Score-table lookups: the inner operation of every MCMC proposal (O(1) expected).
#include <benchmark/benchmark.h>

#include "bench_tables.hpp"

#include <functional>
#include <vector>

#include "covey/core/random.hpp"
#include "covey/scores/score_table.hpp"

namespace {

covey::ScoreTable make_table(int n, int d) {
  covey::Rng rng = covey::make_stream(1, 0);
  return covey::bench::random_bench_table({n, -1, d, 1.0, 0.0}, rng);
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
