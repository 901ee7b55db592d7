// Speed targets of the cover-bounded engines (docs/exact-engine.md), on random score tables with
// every parent set of size <= 3 (made here): best DAG n = 30, k = 3 within 10 s; sampler
// preprocessing n = 20, k = 3 and n = 40, k = 2 within 30 s each; at least 20,000 accepted draws
// per second after preprocessing (n = 20, k = 3). Each figure is printed with its ratio to the
// target as counters (time ratios below 1 and rate ratios above 1 meet the target).
#include <benchmark/benchmark.h>

#include "bench_tables.hpp"

#include <unistd.h>
#include <boost/random/normal_distribution.hpp>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <functional>
#include <memory>
#include <string>

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

// More than 64 variables (issue 15 item 7, no speed target): n = 100 with 20 candidate parents
// per node, k = 2: preprocessing time, memory, and accepted draws per second on one thread.
void BM_CoverSamplerWide(benchmark::State& state) {
  const int n = static_cast<int>(state.range(0)), k = static_cast<int>(state.range(1));
  covey::Rng table_rng = covey::make_stream(5, 0);
  const covey::ScoreTable table = covey::bench::random_bench_table({n, 20, 3, 1.2, 0.5}, table_rng);
  covey::CoverSamplerOptions options;
  options.show_progress = false;
  double seconds = 0, draws_per_second = 0;
  std::size_t bytes = 0;
  for (auto _ : state) {
    const auto start = std::chrono::steady_clock::now();
    const covey::CoverSampler s = covey::CoverSampler::build(table, k, options);
    seconds = seconds_since(start);
    bytes = s.memory_bytes();
    covey::Rng rng = covey::make_stream(6, 0);
    const auto draw_start = std::chrono::steady_clock::now();
    constexpr int kDraws = 20000;
    for (int i = 0; i < kDraws; ++i) benchmark::DoNotOptimize(s.draw(rng));
    draws_per_second = kDraws / seconds_since(draw_start);
  }
  state.counters["seconds"] = seconds;
  state.counters["MiB"] = double(bytes) / (1 << 20);
  state.counters["draws_per_s"] = draws_per_second;
}
BENCHMARK(BM_CoverSamplerWide)
    ->Args({100, 2})
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

namespace {

// Resident memory of this process from /proc/self/status ("VmRSS" now, "VmHWM" its peak), bytes.
double status_bytes(const char* field) {
  std::FILE* f = std::fopen("/proc/self/status", "r");
  if (!f) return NAN;
  char line[256];
  double kib = NAN;
  const std::size_t len = std::strlen(field);
  while (std::fgets(line, sizeof line, f))
    if (std::strncmp(line, field, len) == 0 && line[len] == ':') kib = std::atof(line + len + 1);
  std::fclose(f);
  return kib * 1024;
}

// Restarts the peak (VmHWM) at the current resident size (Linux: "5" > /proc/self/clear_refs).
void reset_peak_memory() {
  if (std::FILE* f = std::fopen("/proc/self/clear_refs", "w")) {
    std::fputs("5", f);
    std::fclose(f);
  }
}

// Issue 15 (k = 3, n = 30): building, saving and loading the sampler. Targets: saving takes no
// longer than building (ratio_save_to_build <= 1), loading is faster than building
// (ratio_load_to_build < 1), and each step's peak resident memory above the process before it is
// the estimate that the memory check used, within 10% (peak_to_estimate_* in [0.9, 1.1]).
// tables_MiB: the sampler's memory_bytes(); target: half of what long double tables took.
void BM_CoverSamplerSaveLoad(benchmark::State& state) {
  const int n = static_cast<int>(state.range(0)), k = static_cast<int>(state.range(1));
  const covey::ScoreTable table = random_table(n, 3, 2);
  covey::CoverSamplerOptions options;
  options.show_progress = false;
  const double estimate = covey::CoverSampler::estimate_memory_bytes(n, k);
  const std::string path = "/tmp/covey_bench_sampler_" + std::to_string(::getpid()) + ".h5";
  double build_s = 0, save_s = 0, load_s = 0, peak_build = 0, peak_save = 0, peak_load = 0;
  double tables_mib = 0;
  for (auto _ : state) {
    reset_peak_memory();
    double before = status_bytes("VmRSS");
    auto start = std::chrono::steady_clock::now();
    {
      const covey::CoverSampler s = covey::CoverSampler::build(table, k, options);
      build_s = seconds_since(start);
      peak_build = status_bytes("VmHWM") - before;
      reset_peak_memory();
      start = std::chrono::steady_clock::now();
      s.save(path, true);  // the benchmark rewrites its own file every iteration
      save_s = seconds_since(start);
      peak_save = status_bytes("VmHWM") - before;
      tables_mib = double(s.memory_bytes()) / (1 << 20);
    }
    reset_peak_memory();
    before = status_bytes("VmRSS");
    start = std::chrono::steady_clock::now();
    {
      const covey::CoverSampler s = covey::CoverSampler::load(path, table);
      load_s = seconds_since(start);
      peak_load = status_bytes("VmHWM") - before;
    }
  }
  std::remove(path.c_str());
  state.counters["build_s"] = build_s;
  state.counters["save_s"] = save_s;
  state.counters["load_s"] = load_s;
  state.counters["ratio_save_to_build"] = save_s / build_s;
  state.counters["ratio_load_to_build"] = load_s / build_s;
  state.counters["estimate_MiB"] = estimate / (1 << 20);
  state.counters["peak_to_estimate_build"] = peak_build / estimate;
  state.counters["peak_to_estimate_save"] = peak_save / estimate;
  state.counters["peak_to_estimate_load"] = peak_load / estimate;
  state.counters["tables_MiB"] = tables_mib;
}
BENCHMARK(BM_CoverSamplerSaveLoad)
    ->Args({30, 3})
    ->Iterations(1)
    ->Unit(benchmark::kSecond)
    ->UseRealTime();

}  // namespace
