// Speed targets of the cover-bounded engines (docs/exact-engine.md), on random score tables with
// every parent set of size <= 3 (made here): best DAG n = 30, k = 3 within 10 s; sampler
// preprocessing n = 20, k = 3 and n = 40, k = 2 within 30 s each; at least 20,000 accepted draws
// per second after preprocessing (n = 20, k = 3). Each figure is printed with its ratio to the
// target as counters (time ratios below 1 and rate ratios above 1 meet the target).
#include <benchmark/benchmark.h>

#include "bench_tables.hpp"

#include <boost/random/normal_distribution.hpp>
#include <chrono>
#include <functional>
#include <memory>

#include "covey/core/random.hpp"
#include "covey/exact/cover_best.hpp"
#include "covey/exact/cover_draws.hpp"
#include "covey/exact/cover_sampler.hpp"

namespace {

covey::ScoreTable random_table(int n, int d, std::uint64_t seed) {
  covey::Rng rng = covey::make_stream(seed, 0);
  return covey::bench::random_bench_table({n, -1, d, 1.2, 0.5}, rng);
}

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

void BM_CoverBest(benchmark::State& state) {
  const int n = static_cast<int>(state.range(0)), k = static_cast<int>(state.range(1));
  const covey::ScoreTable table = random_table(n, 3, 1);
  double seconds = 0;
  for (auto _ : state) {
    const auto start = std::chrono::steady_clock::now();
    benchmark::DoNotOptimize(covey::best_dag_in_cover_class(table, k));
    seconds = seconds_since(start);
  }
  state.counters["seconds"] = seconds;
  state.counters["ratio_to_target_10s"] = seconds / 10.0;
}
BENCHMARK(BM_CoverBest)->Args({30, 3})->Iterations(1)->Unit(benchmark::kSecond)->UseRealTime();

void BM_CoverSamplerPreprocessing(benchmark::State& state) {
  const int n = static_cast<int>(state.range(0)), k = static_cast<int>(state.range(1));
  const covey::ScoreTable table = random_table(n, 3, 2);
  covey::CoverSamplerOptions options;
  options.show_progress = false;
  double seconds = 0;
  std::size_t units = 0, bytes = 0;
  for (auto _ : state) {
    const auto start = std::chrono::steady_clock::now();
    const covey::CoverSampler s = covey::CoverSampler::build(table, k, options);
    seconds = seconds_since(start);
    units = s.num_units();
    bytes = s.memory_bytes();
    state.counters["splits"] = double(s.num_splits());
  }
  state.counters["seconds"] = seconds;
  state.counters["ratio_to_target_30s"] = seconds / 30.0;
  state.counters["units"] = double(units);
  state.counters["MiB"] = double(bytes) / (1 << 20);
}
BENCHMARK(BM_CoverSamplerPreprocessing)
    ->Args({20, 3})
    ->Args({40, 2})
    ->Iterations(1)
    ->Unit(benchmark::kSecond)
    ->UseRealTime();

// Accepted draws per second on one thread (CoverSampler::draw, the call the chains use).
void BM_CoverDrawsPerSecond(benchmark::State& state) {
  const int n = static_cast<int>(state.range(0)), k = static_cast<int>(state.range(1));
  const covey::ScoreTable table = random_table(n, 3, 2);
  covey::CoverSamplerOptions options;
  options.show_progress = false;
  const covey::CoverSampler s = covey::CoverSampler::build(table, k, options);
  covey::Rng rng = covey::make_stream(3, 0);
  std::uint64_t trials = 0, draws = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(s.draw(rng, &trials));
    ++draws;
  }
  state.counters["draws_per_s"] = benchmark::Counter(double(draws), benchmark::Counter::kIsRate);
  state.counters["acceptance"] = double(draws) / double(trials);
  state.SetItemsProcessed(static_cast<std::int64_t>(draws));
}
BENCHMARK(BM_CoverDrawsPerSecond)->Args({20, 3})->MinTime(3.0)->UseRealTime();

// The same through draw_cover_batch (parallel over blocks of draws, all cores), with the ratio
// to the 20,000 draws/s target.
void BM_CoverDrawBatch(benchmark::State& state) {
  const int n = static_cast<int>(state.range(0)), k = static_cast<int>(state.range(1));
  const covey::ScoreTable table = random_table(n, 3, 2);
  covey::CoverSamplerOptions options;
  options.show_progress = false;
  const covey::CoverSampler s = covey::CoverSampler::build(table, k, options);
  const std::size_t count = 100000;
  double seconds = 0;
  for (auto _ : state) {
    const auto start = std::chrono::steady_clock::now();
    benchmark::DoNotOptimize(covey::draw_cover_batch(s, 4, count, false));
    seconds = seconds_since(start);
  }
  state.counters["draws_per_s"] = double(count) / seconds;
  state.counters["ratio_to_target_20000_per_s"] = double(count) / seconds / 20000.0;
}
BENCHMARK(BM_CoverDrawBatch)->Args({20, 3})->Iterations(1)->Unit(benchmark::kSecond)->UseRealTime();

}  // namespace
