// Structure-chain speed: local-move proposals per second on one core.
// Targets (task brief): >= 2e6 / s at n = 30, in-degree <= 3 (all 29 other variables are
// candidates); >= 3e5 / s at n = 200 with 20 candidate parents per node, in-degree <= 3.
// Counters: proposals_per_second and ratio_to_target (>= 1 meets the target).
#include <benchmark/benchmark.h>

#include "bench_tables.hpp"

#include <algorithm>
#include <bit>
#include <boost/random/normal_distribution.hpp>
#include <functional>
#include <vector>

#include "covey/chains/structure_chain.hpp"
#include "covey/core/random.hpp"
#include "covey/scores/score_table.hpp"

namespace {

// `num_candidates` random candidates per node, log scores Normal(0, 1) - penalty * |S| (sparse,
// realistic acceptance rates around a few percent).
covey::ScoreTable make_table(int n, int num_candidates, int d, double penalty) {
  covey::Rng rng = covey::make_stream(42, static_cast<std::uint64_t>(n));
  return covey::bench::random_bench_table({n, num_candidates, d, 1.0, penalty}, rng);
}

void run_chain(benchmark::State& state, int n, int num_candidates, double rev_rate, double target) {
  const covey::ScoreTable table = make_table(n, num_candidates, 3, 1.0);
  covey::ChainConfig config;
  config.rev_rate = rev_rate;
  covey::StructureChain chain(table, config);
  covey::Rng rng = covey::make_stream(1, 0);
  for (int s = 0; s < 200000; ++s) chain.step(rng);  // reach a typical state first
  constexpr int kBatch = 1000;
  const covey::MoveCounts before = chain.counts();
  for (auto _ : state)
    for (int s = 0; s < kBatch; ++s) chain.step(rng);
  const double steps = double(state.iterations()) * kBatch;
  state.SetItemsProcessed(static_cast<std::int64_t>(steps));
  state.counters["proposals_per_second"] = benchmark::Counter(steps, benchmark::Counter::kIsRate);
  state.counters["ratio_to_target"] =
      benchmark::Counter(steps / target, benchmark::Counter::kIsRate);
  std::uint64_t proposed = 0, accepted = 0;
  for (int m = 0; m < covey::kNumMoves; ++m) {
    proposed += chain.counts().proposed[m] - before.proposed[m];
    accepted += chain.counts().accepted[m] - before.accepted[m];
  }
  state.counters["acceptance"] = double(accepted) / double(std::max<std::uint64_t>(proposed, 1));
  state.counters["edges"] = double(chain.num_edges());
}

void BM_LocalMoves_n30_d3(benchmark::State& state) {
  run_chain(state, 30, 29, 0.0, 2e6);
}
void BM_LocalMoves_n200_c20_d3(benchmark::State& state) {
  run_chain(state, 200, 20, 0.0, 3e5);
}
// With REV at the default rate 1/15 (for information; the targets are for local moves).
void BM_WithRev_n30_d3(benchmark::State& state) {
  run_chain(state, 30, 29, 1.0 / 15, 2e6);
}
void BM_WithRev_n200_c20_d3(benchmark::State& state) {
  run_chain(state, 200, 20, 1.0 / 15, 3e5);
}

BENCHMARK(BM_LocalMoves_n30_d3)->MinTime(1.0);
BENCHMARK(BM_LocalMoves_n200_c20_d3)->MinTime(1.0);
BENCHMARK(BM_WithRev_n30_d3)->MinTime(1.0);
BENCHMARK(BM_WithRev_n200_c20_d3)->MinTime(1.0);

}  // namespace
