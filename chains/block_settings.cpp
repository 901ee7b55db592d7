// Block moves before the run: the family of blocks built from the score table, the cost model
// that chooses the block size and rate, and the checks of --block-size and --block-rate
// (docs/chains.md, "Block moves").
#include <algorithm>
#include <cmath>
#include <numeric>

#include "block_move.hpp"
#include "covey/chains/chain_runner.hpp"
#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"
#include "covey/exact/exact_posterior.hpp"

namespace covey {
namespace {

// Seconds per unit of work of a block step, fitted to block steps of m = 8, 10, 11, 12 on the
// 12 Boston columns (`covey chain --block-rate 1 --block-size M --threads 1`, Release, x86-64;
// 1.5, 12, 36 and 140 ms; docs/chains.md): the engine's completion pass and draw per (state, next
// layer) pair, its subset transforms per m^3 2^m / 4, and the derived weights per allowed
// parent set of a block node. A local or REV step took 0.23 us alone on the same table and about
// twice that with four chains on two cores (thinned writes, shared caches): 0.5 us.
constexpr double kSecondsPerPair = 6e-9;
constexpr double kSecondsPerZeta = 2.2e-8;
constexpr double kSecondsPerDerivedSet = 2e-8;
constexpr double kSecondsPerBlockStep = 2e-5;  // fixed: allocations, thread pool, one draw
constexpr double kSecondsPerLocalStep = 5e-7;
// A block of every node keeps one engine for the whole run (block_move.hpp, holds_whole), so a
// step is one exact draw from it plus the chain's bookkeeping; the build is paid once per chain.
// Measured on the 12 Boston columns: about 8 us a step (docs/chains.md).
constexpr double kSecondsPerWholeStep = 1e-5;
// The whole-set engine is chosen automatically when its one build is cheap next to any run and
// its tables small next to the memory of a machine running several chains.
constexpr double kMaxWholeBuildSeconds = 5;
constexpr double kMaxWholeBytes = 512.0 * 1024 * 1024;
// Refused outright: a one-time build beyond this (the user asked for it with --block-size).
constexpr double kMaxWholeBuildSecondsAsked = 600;

bool whole_set_affordable(const ScoreTable& table) {
  const int n = table.num_variables();
  if (n > kMaxBlockSize) return false;
  const ExactCost whole = estimate_exact_cost(n, ExactRoute::kLayered, true);
  return whole.seconds <= kMaxWholeBuildSeconds && double(whole.bytes) <= kMaxWholeBytes;
}

double mean_parent_sets(const ScoreTable& table) {
  return double(table.total_parent_sets()) / std::max(1, table.num_variables());
}

// How strongly u and v belong together: the larger gain of either as the other's only parent
// over the empty set (the pairwise screen of the scorer, read back from the table).
double pair_strength(const ScoreTable& table, int u, int v) {
  auto gain = [&](int parent, int child) -> double {
    const int pos = table.candidate_position(child, parent);
    if (pos < 0) return -INFINITY;
    const long single = table.find(child, ParentMask{1} << pos), empty = table.find(child, 0);
    if (single < 0 || empty < 0) return -INFINITY;
    return table.log_scores(child)[single] - table.log_scores(child)[empty];
  };
  return std::max(gain(u, v), gain(v, u));
}

}  // namespace

std::vector<std::vector<int>> strongest_neighbour_blocks(const ScoreTable& table, int m) {
  const int n = table.num_variables();
  std::vector<std::vector<int>> family;
  if (m < 2 || m >= n) return family;
  std::vector<int> others;
  std::vector<double> strength(n);
  for (int v = 0; v < n; ++v) {
    others.clear();
    for (int u = 0; u < n; ++u)
      if (u != v) {
        others.push_back(u);
        strength[u] = pair_strength(table, u, v);
      }
    std::stable_sort(others.begin(), others.end(),
                     [&](int a, int b) { return strength[a] > strength[b]; });
    std::vector<int> block(others.begin(), others.begin() + (m - 1));
    block.push_back(v);
    std::sort(block.begin(), block.end());
    if (std::find(family.begin(), family.end(), block) == family.end()) family.push_back(block);
  }
  return family;
}

double estimate_block_step_seconds(const ScoreTable& table, int m) {
  if (m == table.num_variables()) return kSecondsPerWholeStep;
  const double pairs = std::pow(4.0, m);
  const double zeta = double(m) * m * m * std::pow(2.0, m) / 4;
  return pairs * kSecondsPerPair + zeta * kSecondsPerZeta +
         m * mean_parent_sets(table) * kSecondsPerDerivedSet + kSecondsPerBlockStep;
}

double estimate_local_step_seconds(const ScoreTable&) {
  return kSecondsPerLocalStep;
}

double choose_block_rate(const ScoreTable& table, int m, double share) {
  if (m <= 0) return 0;
  const double local = share * estimate_local_step_seconds(table);
  const double block = (1 - share) * estimate_block_step_seconds(table, m);
  return local / (local + block);
}

BlockSettings choose_block_settings(const ScoreTable& table, double share,
                                    double max_step_seconds) {
  BlockSettings s;
  // Every node at once when the engine over all of them is cheap: each block step is then an
  // exact draw from the whole posterior, a regeneration.
  if (whole_set_affordable(table)) {
    s.size = table.num_variables();
    s.rate = choose_block_rate(table, s.size, share);
    return s;
  }
  const int largest = std::min(table.num_variables() - 1, kMaxBlockSize);
  for (int m = 1; m <= largest; ++m)
    if (estimate_block_step_seconds(table, m) <= max_step_seconds) s.size = m;
  if (s.size < 2) s.size = 0;  // a block of one node is a Gibbs step of one parent set: skip
  s.rate = choose_block_rate(table, s.size, share);
  return s;
}

void check_block_options(const ChainRunOptions& o, const ScoreTable& table,
                         std::uint64_t memory_limit) {
  const int n = table.num_variables();
  const int largest = std::min(n, kMaxBlockSize);
  if (o.block_size < 0 || o.block_size > largest)
    throw OptionError("{block_size} must lie in 0.." + std::to_string(largest) +
                      " (the table has " + std::to_string(n) + " variables)");
  if (!(o.block_rate >= 0 && o.block_rate <= 1))
    throw OptionError("{block_rate} must lie in [0, 1]");
  if (o.block_rate > 0 && o.block_size == 0)
    throw OptionError("{block_rate} needs {block_size} of at least 1");
  if (o.rev_rate + o.teleport_rate + o.block_rate > 1 + 1e-12)
    throw OptionError("{rev_rate}, {teleport_rate} and {block_rate} must add up to at most 1");
  if (o.block_size == 0) return;
  if (o.block_size == n) {
    const double build = estimate_exact_cost(n, ExactRoute::kLayered, true).seconds;
    if (build > kMaxWholeBuildSecondsAsked)
      throw OptionError("{block_size} " + std::to_string(n) +
                        ": the exact engine over all variables would take about " +
                        std::to_string(int(build)) + " s to build; choose a smaller block");
  }
  constexpr double kMaxStepSeconds = 60;
  const double seconds = o.block_size == n ? 0.0 : estimate_block_step_seconds(table, o.block_size);
  if (seconds > kMaxStepSeconds)
    throw OptionError("{block_size} " + std::to_string(o.block_size) +
                      ": one block step would take about " + std::to_string(int(seconds)) +
                      " s; choose a smaller block");
  // One engine per chain running at a time.
  const double bytes = double(estimate_exact_cost(o.block_size, ExactRoute::kLayered, true).bytes);
  require_memory(bytes * o.chains, memory_limit,
                 "the block moves of " + std::to_string(o.chains) + " chains",
                 "a smaller {block_size}");
}

}  // namespace covey
