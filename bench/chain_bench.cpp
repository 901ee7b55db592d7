// Structure-chain speed: proposals per second on one core, in-degree <= 3; n = 30 with all 29
// other variables as candidates, n = 200 with 20 candidate parents per node.
// Counters: proposals_per_second and ratio_to_target (>= 1 meets the target).
#include <benchmark/benchmark.h>

#include "bench_tables.hpp"

#include <algorithm>
#include <bit>
#include <boost/random/normal_distribution.hpp>
#include <chrono>
#include <functional>
#include <string>
#include <vector>

#include "../chains/chain_testing.hpp"
#include "covey/chains/structure_chain.hpp"
#include "covey/core/random.hpp"
#include "covey/data/data.hpp"
#include "covey/scores/score_table.hpp"
#include "covey/scores/scores.hpp"

namespace {

// `num_candidates` random candidates per node, log scores Normal(0, 1) - penalty * |S| (sparse,
// realistic acceptance rates around a few percent).
covey::ScoreTable make_table(int n, int num_candidates, int d, double penalty) {
  covey::Rng rng = covey::make_stream(42, static_cast<std::uint64_t>(n));
  return covey::bench::random_bench_table({n, num_candidates, d, 1.0, penalty}, rng);
}

void run_chain(benchmark::State& state, int n, int num_candidates, double rev_rate, double target,
               bool screen = true) {
  const covey::ScoreTable table = make_table(n, num_candidates, 3, 1.0);
  covey::ChainConfig config;
  config.rev_rate = rev_rate;
  covey::StructureChain chain =
      covey::make_faulty_chain(table, config, {.exact_local_moves = !screen});
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
  state.counters["screened"] = chain.screens_local_moves() ? 1 : 0;
}

// Issue 15 targets: local moves alone >= 25e6 / s at n = 30 and >= 8e6 / s at n = 200 with 20
// candidates; with REV at the default rate 1/15, >= 2e6 / s at n = 30 (n = 200: for information,
// against the local-move target). The *_Unscreened variants decide every local move on the exact
// double scores (the screen off): the "before" of the screen, measured in the same run.
void BM_LocalMoves_n30_d3(benchmark::State& state) {
  run_chain(state, 30, 29, 0.0, 25e6);
}
void BM_LocalMoves_n30_d3_Unscreened(benchmark::State& state) {
  run_chain(state, 30, 29, 0.0, 25e6, false);
}
void BM_LocalMoves_n200_c20_d3(benchmark::State& state) {
  run_chain(state, 200, 20, 0.0, 8e6);
}
void BM_LocalMoves_n200_c20_d3_Unscreened(benchmark::State& state) {
  run_chain(state, 200, 20, 0.0, 8e6, false);
}
void BM_WithRev_n30_d3(benchmark::State& state) {
  run_chain(state, 30, 29, 1.0 / 15, 2e6);
}
void BM_WithRev_n200_c20_d3(benchmark::State& state) {
  run_chain(state, 200, 20, 1.0 / 15, 8e6);
}

// Rejection skipping (docs/chains.md, "Rejection skipping"): effective proposals per second,
// i.e. chain steps including the skipped rejections, with skipping and without, on the demo's
// table (examples/orchard_inspections.csv scored as examples/run_demo.sh does: BDeu, in-degree
// <= 3) and on the n = 30 table above; local moves alone and with REV at the default rate
// 1/15, no block moves. Counters: steps_per_second of each, skip_over_plain (the ratio; target
// > 1) and accepted_per_step (local moves). Skipping pays when accepted moves are rare against
// the candidates: each one recomputes the bounds of the pairs into the changed node.

// Steps per second over about `seconds`; `acceptance`, if given: accepted local moves per step.
double steps_per_second(const covey::ScoreTable& table, double rev_rate, bool skip, double seconds,
                        double* acceptance = nullptr) {
  covey::ChainConfig config;
  config.rev_rate = rev_rate;
  config.skip_rejections = skip;
  covey::StructureChain chain(table, config);
  covey::Rng rng = covey::make_stream(1, 0);
  std::uint64_t quiet_total = 0;
  const auto advance = [&](std::uint64_t steps) {
    for (std::uint64_t done = 0; done < steps;) {
      if (!skip) {
        chain.step(rng);
        ++done;
        continue;
      }
      const std::uint64_t quiet = chain.quiet_steps(rng, steps - done);
      done += quiet;
      quiet_total += quiet;
      if (done < steps) {
        chain.event_step(rng);
        ++done;
      }
    }
  };
  advance(200000);  // reach a typical state first
  std::uint64_t steps = 0;
  const auto start = std::chrono::steady_clock::now();
  double elapsed = 0;
  for (std::uint64_t batch = 100000; elapsed < seconds;
       batch = std::min<std::uint64_t>(batch * 2, 1ULL << 26)) {
    advance(batch);
    steps += batch;
    elapsed = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  }
  benchmark::DoNotOptimize(quiet_total);
  if (acceptance) {
    const covey::MoveCounts& c = chain.counts();
    *acceptance = double(c.accepted[0] + c.accepted[1] + c.accepted[2]) / double(steps + 200000);
  }
  return double(steps) / elapsed;
}

// With REV at the default rate 1/15 ("rev_") and with local moves alone ("local_").
void skip_versus_plain(benchmark::State& state, const covey::ScoreTable& table) {
  for (auto _ : state) {
    for (const double rev_rate : {0.0, 1.0 / 15}) {
      double acceptance = 0;
      const double plain = steps_per_second(table, rev_rate, false, 1.0, &acceptance);
      const double skip = steps_per_second(table, rev_rate, true, 1.0);
      const std::string kind = rev_rate > 0 ? "rev_" : "local_";
      state.counters[kind + "plain_steps_per_second"] = plain;
      state.counters[kind + "skip_steps_per_second"] = skip;
      state.counters[kind + "skip_over_plain"] = skip / plain;
      state.counters[kind + "accepted_per_step"] = acceptance;
    }
  }
}

void BM_SkipRejections_Demo(benchmark::State& state) {
  const covey::DataTable data =
      covey::read_csv(std::string(COVEY_SOURCE_DIR) + "/examples/orchard_inspections.csv");
  covey::ScoreOptions options;
  options.max_indegree = 3;
  skip_versus_plain(state, covey::score_data(data, options));
}
void BM_SkipRejections_n30_d3(benchmark::State& state) {
  skip_versus_plain(state, make_table(30, 29, 3, 1.0));
}
BENCHMARK(BM_SkipRejections_Demo)->Iterations(1)->Unit(benchmark::kSecond)->UseRealTime();
BENCHMARK(BM_SkipRejections_n30_d3)->Iterations(1)->Unit(benchmark::kSecond)->UseRealTime();

BENCHMARK(BM_LocalMoves_n30_d3)->MinTime(1.0);
BENCHMARK(BM_LocalMoves_n30_d3_Unscreened)->MinTime(1.0);
BENCHMARK(BM_LocalMoves_n200_c20_d3)->MinTime(1.0);
BENCHMARK(BM_LocalMoves_n200_c20_d3_Unscreened)->MinTime(1.0);
BENCHMARK(BM_WithRev_n30_d3)->MinTime(1.0);
BENCHMARK(BM_WithRev_n200_c20_d3)->MinTime(1.0);

}  // namespace

#include <sys/resource.h>
#include <unistd.h>

#include <filesystem>
#include <string>

#include "covey/chains/chain_runner.hpp"

namespace {

double process_cpu_seconds() {
  rusage u{};
  ::getrusage(RUSAGE_SELF, &u);
  return double(u.ru_utime.tv_sec + u.ru_stime.tv_sec) +
         1e-6 * double(u.ru_utime.tv_usec + u.ru_stime.tv_usec);
}

// CPU seconds of run_chains on `table` (2 chains, `steps` each) keeping every `thin`-th state, or
// only the last one when keep is false (the rest is burn-in; a run must keep at least one draw).
double run_chains_cpu(const covey::ScoreTable& table, std::uint64_t steps, std::uint64_t thin,
                      bool keep) {
  const std::string path = (std::filesystem::temp_directory_path() /
                            ("covey_bench_run_" + std::to_string(::getpid()) + ".h5"))
                               .string();
  std::filesystem::remove(path);
  covey::ChainRunOptions o;
  o.chains = 2;
  o.thin = thin;
  o.steps = steps;
  o.burn_in = keep ? 0 : steps - thin;
  // No block moves: their size and rate are chosen from timings when a run is created, so the two
  // runs could differ in chain work, and the figure is the cost of keeping draws alone.
  o.block_size = 0;
  o.block_rate = 0;
  covey::ChainRunHooks hooks;
  hooks.progress = false;
  const double start = process_cpu_seconds();
  covey::run_chains(table, path, o, hooks, false);
  const double cpu = process_cpu_seconds() - start;
  std::filesystem::remove(path);
  return cpu;
}

// Issue 15: run_chains at n = 200 (20 candidates, in-degree <= 3) keeping thinned draws between
// checkpoints must cost about what the same run without draws costs (the pending-draws buffer was
// copied once per 0.2 s segment, quadratic until each checkpoint; the issue measured it at the
// default thin, 1000). Target: CPU with draws kept at most 1.25 x the CPU without
// (ratio_to_target = (with / without) / 1.25 <= 1), at the default thin and, for information, at
// thin 100 (ten times the draws: each one is 6.4 kB of parent words to compress and write).
void BM_RunChainsKeepingDraws_n200(benchmark::State& state) {
  const covey::ScoreTable table = make_table(200, 20, 3, 1.0);
  const std::uint64_t steps = static_cast<std::uint64_t>(state.range(0));
  const std::uint64_t thin = static_cast<std::uint64_t>(state.range(1));
  double with = 0, without = 0;
  for (auto _ : state) {
    without = run_chains_cpu(table, steps, thin, false);
    with = run_chains_cpu(table, steps, thin, true);
  }
  state.counters["cpu_s_with_draws"] = with;
  state.counters["cpu_s_without"] = without;
  state.counters["ratio_to_target"] = with / without / 1.25;
}
BENCHMARK(BM_RunChainsKeepingDraws_n200)
    ->Args({4000000, 1000})
    ->Args({4000000, 100})
    ->Iterations(1)
    ->Unit(benchmark::kSecond)
    ->UseRealTime();

}  // namespace
