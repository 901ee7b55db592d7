// `covey check` on a long run, as the library runs it (check_chain_runs): 4 chains x 100,000
// kept draws of 30 variables, every feature kind (870 edges, 435 adjacencies, 870 ancestor
// relations and the log score: 2,176 features), target <= 10 s wall on 2 threads. The run file
// is made once by a chain of local moves on a random table (bench/bench_tables.hpp).
#include <benchmark/benchmark.h>
#include <tbb/global_control.h>

#include <chrono>
#include <cmath>
#include <ctime>
#include <filesystem>
#include <string>

#include "bench_tables.hpp"
#include "covey/analysis/check.hpp"
#include "covey/chains/chain_runner.hpp"

namespace {

constexpr int kChains = 4;
constexpr int kDrawsPerChain = 100000;
constexpr int kThin = 10;
constexpr double kTargetSeconds = 10;

double process_cpu_seconds() {
  timespec t;
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
  return static_cast<double>(t.tv_sec) + 1e-9 * static_cast<double>(t.tv_nsec);
}

const std::string& run_path() {
  static const std::string path = [] {
    covey::Rng rng = covey::make_stream(2176, 0);
    covey::bench::BenchTableShape shape;
    shape.n = 30;
    const covey::ScoreTable table = covey::bench::random_bench_table(shape, rng);
    covey::ChainRunOptions options;
    options.chains = kChains;
    options.steps = std::uint64_t(kDrawsPerChain) * kThin;
    options.thin = kThin;
    options.seed = 3;
    options.start = "greedy";
    options.block_rate = 0;
    options.block_size = 0;
    options.checkpoint_every = 1e9;
    options.overwrite = true;
    covey::ChainRunHooks hooks;
    hooks.progress = false;
    const std::string out =
        (std::filesystem::temp_directory_path() / "covey_check_bench_run.h5").string();
    covey::run_chains(table, out, options, hooks, false);
    return out;
  }();
  return path;
}

void BM_CheckRun(benchmark::State& state) {
  const std::string& path = run_path();
  tbb::global_control limit(tbb::global_control::max_allowed_parallelism, 2);
  double seconds = 0, cpu_seconds = 0;
  std::size_t features = 0;
  for (auto _ : state) {
    const auto start = std::chrono::steady_clock::now();
    const double cpu_start = process_cpu_seconds();
    const covey::CheckResult result = covey::check_chain_runs({path}, covey::FeatureKinds{}, {});
    seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    cpu_seconds = process_cpu_seconds() - cpu_start;
    features = result.summaries.size();
    benchmark::DoNotOptimize(result.summaries.data());
  }
  state.counters["features"] = static_cast<double>(features);
  state.counters["draws"] = double(kChains) * kDrawsPerChain;
  state.counters["wall_s"] = seconds;
  state.counters["cpu_s"] = cpu_seconds;
  state.counters["ratio_to_10s_target"] = seconds / kTargetSeconds;
}
BENCHMARK(BM_CheckRun)->Iterations(1)->UseRealTime()->Unit(benchmark::kSecond);

}  // namespace
