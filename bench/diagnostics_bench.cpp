// Convergence diagnostics of a long run: 4 chains x 100,000 draws x 870 binary edge features
// (the directed edges of 30 variables), target <= 10 s wall on 2 threads; and the general path
// on continuous features (such as the log score).
#include <benchmark/benchmark.h>
#include <tbb/global_control.h>

#include <boost/random/geometric_distribution.hpp>
#include <boost/random/normal_distribution.hpp>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <ctime>
#include <vector>

#include "covey/core/random.hpp"
#include "covey/diagnostics/diagnostics.hpp"

namespace {

constexpr int kChains = 4;
constexpr int kDraws = 100000;
constexpr std::size_t kEdges = 870;
constexpr double kTargetSeconds = 10;

// CPU seconds of the whole process (all threads): on a shared machine, wall time depends on
// the other load; cpu_s / threads is what the run costs on idle cores.
double process_cpu_seconds() {
  timespec t;
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
  return static_cast<double>(t.tv_sec) + 1e-9 * static_cast<double>(t.tv_nsec);
}

// Sticky 0/1 chains, one per feature and chain, stored as bytes (348 MB in all). Feature f has
// edge probability p spread over (0, 1) and runs of ones 20 to 200 draws long on average;
// runs are drawn as geometric lengths.
const std::vector<std::uint8_t>& edge_draws() {
  static const std::vector<std::uint8_t> data = [] {
    std::vector<std::uint8_t> d(kEdges * kChains * kDraws);
    for (std::size_t f = 0; f < kEdges; ++f) {
      const double p = 0.02 + 0.96 * static_cast<double>((f * 37) % kEdges) / kEdges;
      const double run_of_ones = 20 + 180 * static_cast<double>((f * 11) % 17) / 16;
      const double leave_one = 1 / run_of_ones;
      const double leave_zero = std::min(0.9, leave_one * p / (1 - p));
      for (int c = 0; c < kChains; ++c) {
        covey::Rng rng = covey::make_stream(870, f * kChains + c);
        std::uint8_t* chain = &d[(f * kChains + c) * kDraws];
        int state = covey::uniform01(rng) < p;
        for (int t = 0; t < kDraws;) {
          // geometric_distribution(q) counts failures before the first success of rate q.
          boost::random::geometric_distribution<int> stay(state ? leave_one : leave_zero);
          const int run = std::min(kDraws - t, 1 + stay(rng));
          std::fill(chain + t, chain + t + run, static_cast<std::uint8_t>(state));
          t += run;
          state = 1 - state;
        }
      }
    }
    return d;
  }();
  return data;
}

void BM_EdgeDiagnostics(benchmark::State& state) {
  const std::vector<std::uint8_t>& data = edge_draws();
  const int threads = static_cast<int>(state.range(0));
  tbb::global_control limit(tbb::global_control::max_allowed_parallelism, threads);
  const covey::FeatureSource source = [&data](std::size_t f, std::span<double> values) {
    const std::uint8_t* draws = &data[f * kChains * kDraws];
    for (std::size_t i = 0; i < values.size(); ++i) values[i] = draws[i];
  };
  double seconds = 0, cpu_seconds = 0;
  std::size_t undefined = 0;
  for (auto _ : state) {
    const auto start = std::chrono::steady_clock::now();
    const double cpu_start = process_cpu_seconds();
    const auto summaries = covey::summarize_features(kEdges, kChains, kDraws, source);
    seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    cpu_seconds = process_cpu_seconds() - cpu_start;
    undefined = 0;
    for (const auto& s : summaries) undefined += std::isnan(s.ess_bulk);
    benchmark::DoNotOptimize(summaries.data());
  }
  state.counters["threads"] = threads;
  state.counters["features"] = static_cast<double>(kEdges);
  state.counters["undefined"] = static_cast<double>(undefined);
  state.counters["wall_s"] = seconds;
  state.counters["ratio_to_10s_target"] = seconds / kTargetSeconds;
  state.counters["cpu_s"] = cpu_seconds;
}
BENCHMARK(BM_EdgeDiagnostics)->Arg(2)->Iterations(1)->UseRealTime()->Unit(benchmark::kSecond);

// Continuous features (rank normalization by sorting, four autocovariance passes each).
void BM_ContinuousDiagnostics(benchmark::State& state) {
  constexpr std::size_t kFeatures = 8;
  std::vector<double> data(kFeatures * kChains * kDraws);
  covey::Rng rng = covey::make_stream(871, 0);
  boost::random::normal_distribution<double> normal(0.0, 1.0);
  for (std::size_t c = 0; c < kFeatures * kChains; ++c) {
    double x = 0;
    for (int t = 0; t < kDraws; ++t) data[c * kDraws + t] = x = 0.95 * x + normal(rng);
  }
  tbb::global_control limit(tbb::global_control::max_allowed_parallelism, 2);
  const covey::FeatureSource source = [&data](std::size_t f, std::span<double> values) {
    std::copy_n(&data[f * kChains * kDraws], values.size(), values.begin());
  };
  for (auto _ : state) {
    const auto summaries = covey::summarize_features(kFeatures, kChains, kDraws, source);
    benchmark::DoNotOptimize(summaries.data());
  }
  state.counters["per_feature_s"] = benchmark::Counter(
      static_cast<double>(kFeatures),
      benchmark::Counter::kIsIterationInvariantRate | benchmark::Counter::kInvert);
}
BENCHMARK(BM_ContinuousDiagnostics)->Iterations(1)->UseRealTime()->Unit(benchmark::kSecond);

}  // namespace
