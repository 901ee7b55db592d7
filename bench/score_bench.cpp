// Scoring speed: BDeu local scores of generated discrete data, and CSV reading.
//
// Targets: n = 30 variables (3 levels) x 10,000 rows, max in-degree 3, every other variable a
// candidate (4,090 parent sets per node): <= 5 s wall on 2 cores. Also n = 200 with 20 candidates.
// Counters: parent_sets_per_second, and ratio_to_5s_target = wall seconds / 5 (<= 1 meets it).
#include <benchmark/benchmark.h>

#include <algorithm>
#include <chrono>
#include <string>
#include <vector>

#include "covey/core/random.hpp"
#include "covey/data/data.hpp"
#include "covey/scores/scores.hpp"

namespace {

// Rows from a random Bayesian network over 3-level variables: node v draws up to 2 parents among
// the previous nodes and a random conditional table, so the data have real dependencies (which
// the candidate screen then has something to find).
covey::DataTable generated_data(int n, std::size_t rows, std::uint64_t seed) {
  covey::Rng rng = covey::make_stream(seed, 0);
  constexpr int kLevels = 3;
  std::vector<std::vector<int>> parents(n);
  std::vector<std::vector<double>> tables(n);
  for (int v = 0; v < n; ++v) {
    for (int k = 0; k < 2 && v > 0; ++k) {
      const int u = static_cast<int>(covey::uniform_below(rng, v));
      if (std::find(parents[v].begin(), parents[v].end(), u) == parents[v].end())
        parents[v].push_back(u);
    }
    int configs = 1;
    for (std::size_t k = 0; k < parents[v].size(); ++k) configs *= kLevels;
    for (int j = 0; j < configs; ++j) {
      double w[kLevels], sum = 0;
      for (double& x : w) sum += (x = 0.05 + covey::uniform01(rng));
      for (double x : w) tables[v].push_back(x / sum);
    }
  }
  std::vector<std::vector<std::uint16_t>> codes(n, std::vector<std::uint16_t>(rows));
  for (std::size_t i = 0; i < rows; ++i) {
    for (int v = 0; v < n; ++v) {
      int j = 0;
      for (int u : parents[v]) j = j * kLevels + codes[u][i];
      double x = covey::uniform01(rng);
      int k = 0;
      while (k + 1 < kLevels && x >= tables[v][j * kLevels + k]) x -= tables[v][j * kLevels + k++];
      codes[v][i] = static_cast<std::uint16_t>(k);
    }
  }
  std::vector<covey::Variable> vars;
  for (int v = 0; v < n; ++v)
    vars.push_back({"X" + std::to_string(v), covey::VariableKind::kDiscrete, {"a", "b", "c"}});
  return covey::DataTable::discrete(std::move(vars), std::move(codes));
}

void BM_ScoreBdeu(benchmark::State& state) {
  const int n = static_cast<int>(state.range(0));
  const int candidates = static_cast<int>(state.range(1));
  const covey::DataTable data = generated_data(n, 10000, 7);
  covey::ScoreOptions options;
  options.max_indegree = 3;
  options.candidates = candidates;
  std::size_t sets = 0;
  double seconds = 0;
  for (auto _ : state) {
    const auto start = std::chrono::steady_clock::now();
    const covey::ScoreTable table = covey::score_data(data, options);
    seconds += std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    sets += table.total_parent_sets();
    benchmark::DoNotOptimize(table.total_parent_sets());
  }
  const double per_run = seconds / static_cast<double>(state.iterations());
  state.counters["parent_sets"] = static_cast<double>(sets / state.iterations());
  state.counters["parent_sets_per_second"] = static_cast<double>(sets) / seconds;
  state.counters["wall_seconds"] = per_run;
  state.counters["ratio_to_5s_target"] = per_run / 5.0;
}
BENCHMARK(BM_ScoreBdeu)
    ->Args({30, 29})
    ->Args({200, 20})
    ->ArgNames({"n", "candidates"})
    ->Unit(benchmark::kSecond)
    ->Iterations(1)
    ->UseRealTime();

// CSV reading: rows x 64 discrete columns of short labels.
void BM_ReadCsv(benchmark::State& state) {
  const std::size_t rows = static_cast<std::size_t>(state.range(0));
  const int columns = static_cast<int>(state.range(1));
  std::string text;
  for (int j = 0; j < columns; ++j) text += (j ? ",c" : "c") + std::to_string(j);
  text += '\n';
  covey::Rng rng = covey::make_stream(3, 0);
  for (std::size_t i = 0; i < rows; ++i) {
    for (int j = 0; j < columns; ++j) {
      if (j) text += ',';
      text += static_cast<char>('a' + covey::uniform_below(rng, 3));
    }
    text += '\n';
  }
  for (auto _ : state) {
    const covey::DataTable data = covey::parse_csv(text, "bench.csv");
    benchmark::DoNotOptimize(data.num_rows());
  }
  state.counters["cells_per_second"] = benchmark::Counter(
      static_cast<double>(rows) * columns * state.iterations(), benchmark::Counter::kIsRate);
  state.counters["MB_per_second"] = benchmark::Counter(
      static_cast<double>(text.size()) * state.iterations() / 1e6, benchmark::Counter::kIsRate);
}
BENCHMARK(BM_ReadCsv)
    ->Args({1000000, 64})
    ->ArgNames({"rows", "columns"})
    ->Unit(benchmark::kSecond)
    ->Iterations(1)
    ->UseRealTime();

}  // namespace
