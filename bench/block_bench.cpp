// Exact block moves (issue 14). Two benchmarks:
//  - BlockStep/m: the seconds of one block step of m nodes (n = 30, 20 candidates, in-degree
//    <= 3), printed with the ratio to the cost model that chooses the block size and rate
//    (estimate_block_step_seconds in chains/block_settings.cpp; target ratio about 1).
//  - BlockBoston: 12 columns of MASS::Boston (read from R with Rscript when the benchmark runs;
//    BGe on raw units, in-degree <= 3). Four chains run for the same wall time with local moves
//    and REV alone, and with the defaults of `covey chain` (block moves on, automatic size and
//    rate, greedy starts). Printed: the minimum bulk ESS per second over the edges whose exact
//    probability lies in [0.01, 0.99], its ratio (target >= 20x), and the largest
//    |estimate - exact| / MCSE over all edges (target <= 4) against the exact engine.
#include <benchmark/benchmark.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <string>
#include <vector>

#include "bench_tables.hpp"
#include "covey/chains/chain_run_file.hpp"
#include "covey/chains/chain_runner.hpp"
#include "covey/chains/structure_chain.hpp"
#include "covey/core/random.hpp"
#include "covey/data/data.hpp"
#include "covey/diagnostics/diagnostics.hpp"
#include "covey/exact/exact_posterior.hpp"
#include "covey/scores/scores.hpp"

namespace {

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

void BlockStep(benchmark::State& state) {
  const int m = static_cast<int>(state.range(0));
  covey::Rng table_rng = covey::make_stream(3, 0);
  covey::bench::BenchTableShape shape;
  shape.n = 30;
  shape.candidates = 20;
  const covey::ScoreTable table = covey::bench::random_bench_table(shape, table_rng);
  covey::ChainConfig config;
  config.block_size = m;
  config.block_rate = 1.0;
  covey::StructureChain chain(table, config);
  covey::Rng rng = covey::make_stream(4, 0);
  std::uint64_t steps = 0;
  const auto start = std::chrono::steady_clock::now();
  for (auto _ : state) {
    chain.step(rng);
    ++steps;
  }
  const double per_step = seconds_since(start) / double(std::max<std::uint64_t>(steps, 1));
  const double model = covey::estimate_block_step_seconds(table, m);
  state.counters["seconds_per_step"] = per_step;
  state.counters["model_seconds"] = model;
  state.counters["ratio_to_model"] = per_step / model;
}
BENCHMARK(BlockStep)->DenseRange(2, 12, 2)->Unit(benchmark::kMillisecond);

// ---- Boston --------------------------------------------------------------------------------

constexpr int kChains = 4;
constexpr double kSecondsPerConfiguration = 60;
constexpr double kCommonEdge = 0.01;
constexpr double kTargetRatio = 20;
constexpr double kMaxZ = 4;

std::string boston_csv(const std::filesystem::path& dir) {
  const std::string path = (dir / "boston12.csv").string();
  const std::string cmd =
      "Rscript -e 'd <- MASS::Boston[, c(\"crim\", \"zn\", \"indus\", \"nox\", \"rm\", \"age\", "
      "\"dis\", \"rad\", \"tax\", \"ptratio\", \"lstat\", \"medv\")]; "
      "write.csv(d, \"" +
      path + "\", row.names = FALSE, quote = FALSE)' >/dev/null 2>&1";
  if (std::system(cmd.c_str()) != 0) return "";
  return path;
}

struct Outcome {
  double seconds = 0;
  std::uint64_t steps = 0;
  int block_size = 0;
  double block_rate = 0;
  std::uint64_t blocks = 0, regenerations = 0;
  double min_ess_common = NAN, max_rhat = 0, max_z = 0;
};

Outcome run_configuration(const covey::ScoreTable& table, bool blocks,
                          const covey::ExactPosterior& exact, const std::string& path) {
  covey::ChainRunOptions options;
  options.chains = kChains;
  options.thin = 1000;
  options.seed = 1;
  options.start = "greedy";
  options.block_size = blocks ? -1 : 0;  // -1: the automatic choice, as `covey chain` does
  options.block_rate = blocks ? -1 : 0;
  options.max_seconds = kSecondsPerConfiguration;
  options.checkpoint_every = 1e9;
  covey::ChainRunHooks hooks;
  hooks.progress = false;
  std::filesystem::remove(path);
  const covey::ChainRunSummary summary = covey::run_chains(table, path, options, hooks, false);
  Outcome out;
  out.seconds = summary.seconds;
  out.steps = summary.steps;
  out.blocks = summary.counts.proposed[int(covey::Move::kBlock)];
  for (auto r : summary.regenerations) out.regenerations += r;
  const covey::ChainRun run = covey::ChainRun::open(path);
  out.block_size = run.options().block_size;
  out.block_rate = run.options().block_rate;
  const covey::RunFeatures features(run);
  const int n = table.num_variables();
  std::vector<std::pair<int, int>> edges;
  for (int u = 0; u < n; ++u)
    for (int v = 0; v < n; ++v)
      if (u != v) edges.emplace_back(u, v);
  const auto summaries =
      covey::summarize_features(edges.size(), features.chains(), features.iterations(),
                                [&](std::size_t i, std::span<double> values) {
                                  features.edge(edges[i].first, edges[i].second, values);
                                });
  double min_common = INFINITY;
  for (std::size_t i = 0; i < edges.size(); ++i) {
    const double p = exact.edge(edges[i].first, edges[i].second);
    const auto& s = summaries[i];
    if (p >= kCommonEdge && p <= 1 - kCommonEdge) {
      min_common = std::min(min_common, std::isnan(s.ess_bulk) ? 0.0 : s.ess_bulk);
      if (!std::isnan(s.rhat)) out.max_rhat = std::max(out.max_rhat, s.rhat);
    }
    const double diff = std::abs(s.mean - p);
    const double z = s.mcse > 0 ? diff / s.mcse : (diff < 1e-3 ? 0.0 : INFINITY);
    out.max_z = std::max(out.max_z, z);
  }
  out.min_ess_common = min_common;
  std::filesystem::remove(path);
  return out;
}

void BlockBoston(benchmark::State& state) {
  for (auto _ : state) {
    const auto dir = std::filesystem::temp_directory_path() /
                     ("covey_block_bench_" + std::to_string(::getpid()));
    std::filesystem::create_directories(dir);
    const std::string csv = boston_csv(dir);
    if (csv.empty()) {
      state.SkipWithError("Rscript with MASS (r-cran-mass) is needed for the Boston data");
      return;
    }
    covey::CsvOptions csv_options;
    csv_options.kind = covey::ColumnKindChoice::kGaussian;
    const covey::DataTable data = covey::read_csv(csv, csv_options);
    covey::ScoreOptions score_options;
    score_options.max_indegree = 3;
    const covey::ScoreTable table = covey::score_data(data, score_options);
    auto t0 = std::chrono::steady_clock::now();
    const covey::ExactEngine engine(table);
    std::printf(
        "\nBlock benchmark, MASS::Boston (12 columns, 506 rows, BGe raw units, "
        "in-degree <= 3): exact engine %.2f s\n",
        seconds_since(t0));
    const Outcome local =
        run_configuration(table, false, engine.posterior(), (dir / "local.h5").string());
    const Outcome block =
        run_configuration(table, true, engine.posterior(), (dir / "block.h5").string());
    std::filesystem::remove_all(dir);
    std::printf("  %-22s %8s %12s %10s %10s %9s %7s %7s\n", "configuration", "seconds",
                "steps/chain", "min ESS", "ESS/s", "max R-hat", "max z", "blocks");
    for (const auto& [name, o] : {std::pair{"local + REV", local}, {"defaults (block)", block}})
      std::printf("  %-22s %8.1f %12llu %10.1f %10.3f %9.4f %7.2f %7llu\n", name, o.seconds,
                  (unsigned long long)o.steps, o.min_ess_common, o.min_ess_common / o.seconds,
                  o.max_rhat, o.max_z, (unsigned long long)o.blocks);
    const double ratio = (block.min_ess_common / block.seconds) /
                         std::max(local.min_ess_common / local.seconds, 1e-9);
    std::printf("  automatic block size %d, rate %.3g; regenerations %llu\n", block.block_size,
                block.block_rate, (unsigned long long)block.regenerations);
    std::printf(
        "  min bulk ESS/s over edges in [0.01, 0.99]: ratio %.1fx (target >= %.0fx: %s); "
        "block max z %.2f (target <= %.0f: %s)\n",
        ratio, kTargetRatio, ratio >= kTargetRatio ? "met" : "NOT met", block.max_z, kMaxZ,
        block.max_z <= kMaxZ ? "met" : "NOT met");
    state.counters["ess_per_s_ratio"] = ratio;
    state.counters["ratio_to_target"] = ratio / kTargetRatio;
    state.counters["block_max_z"] = block.max_z;
    state.counters["block_max_rhat"] = block.max_rhat;
  }
}
BENCHMARK(BlockBoston)->Iterations(1)->Unit(benchmark::kSecond);

}  // namespace
