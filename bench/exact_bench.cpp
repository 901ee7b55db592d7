// The exact engine over all DAGs (docs/exact-engine.md). Targets (brief of the exact engine):
// n = 14 with in-degree <= 3: total weight and all edge probabilities in <= 60 s; exact draws at
// >= 10,000 per second. Counters print the figure, the target and their ratio (>= 1 meets it).
#include <benchmark/benchmark.h>

#include "bench_tables.hpp"

#include <boost/random/normal_distribution.hpp>
#include <chrono>
#include <functional>

#include "covey/core/random.hpp"
#include "covey/exact/exact_posterior.hpp"

namespace {

covey::ScoreTable bench_table(int n, int d, std::uint64_t seed) {
  covey::Rng rng = covey::make_stream(seed, 0);
  return covey::bench::random_bench_table({n, -1, d, 1.2, 0.5}, rng);
}

double seconds_since(std::chrono::steady_clock::time_point t0) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
}

void run_posterior(benchmark::State& state, covey::ExactRoute route) {
  const int n = static_cast<int>(state.range(0));
  const covey::ScoreTable table = bench_table(n, 3, 7);
  covey::ExactOptions options;
  options.route = route;
  double seconds = 0;
  for (auto _ : state) {
    const auto t0 = std::chrono::steady_clock::now();
    covey::ExactEngine engine(table, options);
    benchmark::DoNotOptimize(engine.posterior().edge_probability.data());
    seconds = seconds_since(t0);
    state.counters["discrepancy"] = engine.posterior().discrepancy;
  }
  constexpr double kTargetSeconds = 60;
  state.counters["seconds"] = seconds;
  state.counters["target_s"] = kTargetSeconds;
  state.counters["target/actual"] = kTargetSeconds / seconds;
}

// Total weight, every edge, adjacency and ancestor probability.
void BM_ExactPosteriorLayered(benchmark::State& state) {
  run_posterior(state, covey::ExactRoute::kLayered);
}
BENCHMARK(BM_ExactPosteriorLayered)
    ->Arg(10)
    ->Arg(12)
    ->Arg(14)
    ->Unit(benchmark::kSecond)
    ->Iterations(1);

void BM_ExactPosteriorSigned(benchmark::State& state) {
  run_posterior(state, covey::ExactRoute::kSigned);
}
BENCHMARK(BM_ExactPosteriorSigned)
    ->Arg(10)
    ->Arg(12)
    ->Arg(14)
    ->Unit(benchmark::kSecond)
    ->Iterations(1);

// Exact independent draws after the layer table is built (the build is timed separately).
void BM_ExactDraws(benchmark::State& state) {
  const int n = static_cast<int>(state.range(0));
  const covey::ScoreTable table = bench_table(n, 3, 7);
  covey::ExactOptions options;
  options.features = false;
  options.draws = true;
  const auto t0 = std::chrono::steady_clock::now();
  const covey::ExactEngine engine(table, options);
  const double build_seconds = seconds_since(t0);
  constexpr std::size_t kDraws = 20000;
  std::uint64_t seed = 1;
  double seconds = 0;
  for (auto _ : state) {
    const auto t1 = std::chrono::steady_clock::now();
    auto draws = engine.draw_many(kDraws, seed++);
    benchmark::DoNotOptimize(draws.data());
    seconds = seconds_since(t1);
  }
  constexpr double kTargetPerSecond = 10000;
  const double rate = kDraws / seconds;
  state.counters["build_s"] = build_seconds;
  state.counters["draws/s"] = rate;
  state.counters["target/s"] = kTargetPerSecond;
  state.counters["actual/target"] = rate / kTargetPerSecond;
}
BENCHMARK(BM_ExactDraws)->Arg(10)->Arg(14)->Unit(benchmark::kMillisecond)->Iterations(1);

}  // namespace
