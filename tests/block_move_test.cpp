// The exact block move (docs/mathematics.md, "Exact block moves") against brute force: its
// normaliser for every block of many states (n = 4: every state; n = 5: every 50th DAG), the
// law of one step from fixed states against the brute-force conditional (Pearson's chi-square),
// and chains with block moves at n = 10 against the exact engine (src/exact_posterior). Each
// check has a deliberately broken twin (BlockFault) that must fail it. The stationarity of block
// moves at n = 4 and 5 against enumeration is in structure_chain_test.cpp with the other moves.
#include <gtest/gtest.h>

#include <bit>
#include <cmath>
#include <vector>

#include "../chains/chain_testing.hpp"
#include "covey/chains/structure_chain.hpp"
#include "covey/core/logmath.hpp"
#include "covey/exact/exact_posterior.hpp"
#include "covey/graph/enumerate.hpp"
#include "exact_test_util.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

// Every DAG of a table with its log weight.
struct AllDags {
  std::vector<Dag> dags;
  std::vector<double> log_weight;
};

AllDags all_dags(const ScoreTable& table) {
  AllDags all;
  for_each_dag(table, [&](const Dag& d, double lw) {
    all.dags.push_back(d);
    all.log_weight.push_back(lw);
  });
  return all;
}

std::vector<int> members(std::uint64_t mask) {
  std::vector<int> out;
  for (; mask; mask &= mask - 1) out.push_back(std::countr_zero(mask));
  return out;
}

// The nodes where g's parent set differs from the state's.
std::uint64_t differing_nodes(const Dag& g, const Dag& state) {
  std::uint64_t diff = 0;
  for (int v = 0; v < g.size(); ++v)
    if (g.parent_mask(v) != state.parent_mask(v)) diff |= std::uint64_t{1} << v;
  return diff;
}

// log of the brute-force block normaliser of `state` for every block B (index: node mask):
// the DAGs that agree with the state outside B, each weighted by prod_{v in B} f_v(G_v) =
// w(G) / prod_{v not in B} f_v(state_v).
std::vector<double> brute_log_normalisers(const ScoreTable& table, const AllDags& all,
                                          const Dag& state) {
  const int n = table.num_variables();
  const std::size_t blocks = std::size_t{1} << n;
  std::vector<LogSumAccumulator> by_diff(blocks);
  for (std::size_t g = 0; g < all.dags.size(); ++g)
    by_diff[differing_nodes(all.dags[g], state)].add(all.log_weight[g]);
  std::vector<double> out(blocks, kNegInf);
  for (std::uint64_t b = 1; b < blocks; ++b) {
    LogSumAccumulator z;
    for (std::uint64_t d = b;; d = (d - 1) & b) {  // every diff inside B
      z.add(by_diff[d]);
      if (d == 0) break;
    }
    double outside = 0;
    for (int v = 0; v < n; ++v)
      if (!((b >> v) & 1U)) outside += table.log_score_global(v, state.parent_mask(v));
    out[b] = z.value() - outside;
  }
  return out;
}

// Largest |log Z_block - brute force| over every block of every `stride`-th DAG as the state.
double worst_normaliser_error(const ScoreTable& table, const AllDags& all, std::size_t stride,
                              BlockFault fault) {
  const int n = table.num_variables();
  const ChainConfig config;
  StructureChain chain = make_faulty_chain(table, config, ChainFaults{.block = fault});
  double worst = 0;
  for (std::size_t s = 0; s < all.dags.size(); s += stride) {
    chain.set_dag(all.dags[s]);
    const std::vector<double> brute = brute_log_normalisers(table, all, all.dags[s]);
    for (std::uint64_t b = 1; b < (std::uint64_t{1} << n); ++b) {
      const std::vector<int> block = members(b);
      const double got = chain.block_log_normaliser(block);
      worst = std::max(worst, std::abs(got - brute[b]));
    }
  }
  return worst;
}

TEST(BlockMove, NormaliserMatchesBruteForceForEveryBlock) {
  const ScoreTable t4 = testing_util::random_full_table(4, 3, 41);
  const AllDags all4 = all_dags(t4);
  ASSERT_EQ(all4.dags.size(), 543u);  // OEIS A003024
  EXPECT_LT(worst_normaliser_error(t4, all4, 1, BlockFault::kNone), 1e-9);
  const ScoreTable t5 = testing_util::random_full_table(5, 3, 42);
  const AllDags all5 = all_dags(t5);
  EXPECT_LT(worst_normaliser_error(t5, all5, 50, BlockFault::kNone), 1e-9);
  // Ignoring the paths through the other nodes counts parent sets that close cycles.
  EXPECT_GT(worst_normaliser_error(t5, all5, 50, BlockFault::kIgnoreOutsidePaths), 1e-3);
}

// Pearson's chi-square (exact_test_util.hpp, Boost.Math) of `draws` one-step draws of the block
// move from `state` against the brute-force conditional of the block given the other nodes.
double one_step_p_value(const ScoreTable& table, const AllDags& all, const Dag& state,
                        std::uint64_t block_mask, BlockFault fault, std::uint64_t seed) {
  exact_testing::Enumerated conditional;
  conditional.n = table.num_variables();
  LogSumAccumulator z;
  std::vector<std::size_t> agree;
  for (std::size_t g = 0; g < all.dags.size(); ++g)
    if ((differing_nodes(all.dags[g], state) & ~block_mask) == 0) {
      agree.push_back(g);
      z.add(all.log_weight[g]);
    }
  for (std::size_t g : agree)
    conditional.probability[all.dags[g].words()] = std::exp(all.log_weight[g] - z.value());
  const ChainConfig config;
  StructureChain chain = make_faulty_chain(table, config, ChainFaults{.block = fault});
  Rng rng = make_stream(seed, 0);
  const std::vector<int> block = members(block_mask);
  std::vector<Dag> draws;
  constexpr int kDraws = 12000;
  for (int i = 0; i < kDraws; ++i) {
    chain.set_dag(state);
    EXPECT_TRUE(chain.block_move_on(block, rng));
    draws.push_back(chain.dag());
  }
  const exact_testing::ChiSquare chi = exact_testing::chi_square(draws, conditional);
  EXPECT_EQ(chi.outside, 0u);
  return chi.p_value;
}

TEST(BlockMove, OneStepLawMatchesBruteForceConditional) {
  const ScoreTable table = testing_util::random_full_table(5, 3, 43);
  const AllDags all = all_dags(table);
  // States with several edges into and out of the blocks (fixed indices into the enumeration).
  double worst_ok = 1, worst_uniform = 1;
  int checked = 0;
  for (std::size_t s = 7; s < all.dags.size() && checked < 3; s += 4111) {
    const Dag& state = all.dags[s];
    int edges = 0;
    for (int v = 0; v < 5; ++v) edges += std::popcount(state.parent_mask(v));
    if (edges < 4) continue;
    for (std::uint64_t block : {0b10101ULL, 0b11110ULL}) {
      worst_ok =
          std::min(worst_ok, one_step_p_value(table, all, state, block, BlockFault::kNone, 10 + s));
      worst_uniform = std::min(worst_uniform,
                               one_step_p_value(table, all, state, block,
                                                BlockFault::kUniformWithinBlockParentSet, 10 + s));
    }
    ++checked;
  }
  ASSERT_EQ(checked, 3);
  // Six tests at level 1e-4 each; the uniform choice within a block parent set is far off.
  EXPECT_GT(worst_ok, 1e-4);
  EXPECT_LT(worst_uniform, 1e-8);
}

// Edge probabilities of a chain with block moves, local moves and REV at n = 10 against the
// exact engine, within 4 Monte Carlo standard errors (batch means).
double worst_edge_z(const ScoreTable& table, const ExactPosterior& exact, BlockFault fault) {
  const int n = table.num_variables();
  ChainConfig config;
  config.block_rate = 0.2;
  config.block_size = 5;
  // The broken twin can leave cycles behind, which REV's descendant bookkeeping cannot walk.
  config.rev_rate = fault == BlockFault::kNone ? 0.1 : 0.0;
  StructureChain chain = make_faulty_chain(table, config, ChainFaults{.block = fault});
  Rng rng = make_stream(44, 0);
  for (int s = 0; s < 2000; ++s) chain.step(rng);
  constexpr int kBatches = 40, kBatchSteps = 2500;
  std::vector<double> batch(std::size_t(n) * n * kBatches, 0.0);
  for (int b = 0; b < kBatches; ++b)
    for (int s = 0; s < kBatchSteps; ++s) {
      chain.step(rng);
      const Dag d = chain.dag();
      for (int v = 0; v < n; ++v)
        for (std::uint64_t m = d.parent_mask(v); m; m &= m - 1)
          batch[(std::size_t(std::countr_zero(m)) * n + v) * kBatches + b] += 1.0 / kBatchSteps;
    }
  double worst = 0;
  for (int u = 0; u < n; ++u)
    for (int v = 0; v < n; ++v) {
      if (u == v) continue;
      const double* x = &batch[(std::size_t(u) * n + v) * kBatches];
      double mean = 0, var = 0;
      for (int b = 0; b < kBatches; ++b) mean += x[b] / kBatches;
      for (int b = 0; b < kBatches; ++b) var += (x[b] - mean) * (x[b] - mean);
      const double mcse = std::sqrt(var / (kBatches - 1) / kBatches);
      const double diff = std::abs(mean - exact.edge(u, v));
      worst = std::max(worst, mcse > 0 ? diff / mcse : (diff < 1e-9 ? 0.0 : INFINITY));
    }
  return worst;
}

TEST(BlockMove, ChainAtTenNodesAgreesWithExactEngine) {
  const ScoreTable table = testing_util::random_full_table(10, 2, 45);
  const ExactEngine engine(table);
  const ExactPosterior& exact = engine.posterior();
  EXPECT_LT(worst_edge_z(table, exact, BlockFault::kNone), 4.0);
  EXPECT_GT(worst_edge_z(table, exact, BlockFault::kIgnoreOutsidePaths), 4.0);
}

}  // namespace
}  // namespace covey
