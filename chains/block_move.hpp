#pragma once
// The exact block move of the structure chain (docs/mathematics.md, "Exact block moves";
// docs/chains.md). Private to chains/: the chain calls it through StructureChain::block_move.
//
// For a block B of m nodes and the current parent sets of the other nodes O = V \ B:
//  - R(o), for o in O, is the set of block nodes that reach o through O only (fixed edges);
//  - a parent set P of v in B is valid iff no o in P \ B has v in R(o); its block parent set is
//    Q(P) = (P & B) | union of R(o) over o in P \ B;
//  - g_v(Q) = sum of f_v(P) over the valid P with Q(P) = Q.
// The block graph H (H_v = Q(P_v)) is then drawn from the exact DAG posterior on B with local
// weights g (the exact engine's layered sampler), and each P_v among the valid P with
// Q(P) = H_v with probability f_v(P) / g_v(H_v).
#include <cstdint>
#include <memory>
#include <span>
#include <vector>

#include "chain_testing.hpp"
#include "covey/chains/chain_runner.hpp"
#include "covey/chains/structure_chain.hpp"
#include "covey/core/random.hpp"
#include "covey/exact/exact_posterior.hpp"
#include "covey/scores/score_table.hpp"

namespace covey {

// The largest block: the engine's tables grow as 3^m and its passes as 4^m (m = 20 is about
// 10^12 steps, far beyond any share of a run; the runner refuses sizes beyond its limits).
inline constexpr int kMaxBlockSize = 20;

class BlockMove {
 public:
  BlockMove(const ScoreTable& table, const ChainConfig& config,
            BlockFault fault = BlockFault::kNone);

  // A block from the move's fixed distribution (it never looks at the state), sorted.
  const std::vector<int>& draw_block(Rng& rng);
  // Derives the weights g of `block` for the state `local` (local parent masks of all nodes).
  void derive(std::span<const ParentMask> local, std::span<const int> block);
  // log of the block normaliser, sum over H of prod_v g_v(H_v) (after derive()).
  double log_normaliser() const;
  // Draws new local parent masks for the block's nodes, in block order (after derive()).
  void draw(Rng& rng, std::vector<ParentMask>& next) const;
  int block_size() const { return block_size_; }
  // Whether derive() can be skipped: the block is every node and its weights are already held.
  // Over all nodes nothing lies outside the block, so g_v = f_v whatever the state, and one
  // engine serves every step (each draw is then an exact draw from the whole posterior).
  bool holds_whole(std::span<const int> block) const {
    return whole_ready_ && int(block.size()) == n_;
  }

 private:
  std::uint64_t reach(int o, std::span<const ParentMask> local);

  const ScoreTable* table_;
  int n_;
  int block_size_;
  std::vector<std::vector<int>> family_;
  std::uint64_t family_threshold_ = 0;
  BlockFault fault_;
  // Per step.
  std::vector<int> block_, order_;
  std::vector<int> nodes_;             // the block of the last derive()
  std::vector<int> position_;          // position of a node in the block, or -1
  std::vector<std::uint64_t> reach_;   // R(o) as block-position bits
  std::vector<std::uint8_t> reached_;  // R(o) computed this step
  std::vector<int> reached_list_;
  std::vector<std::vector<double>> log_g_;        // per block position, over 2^m sets Q
  std::vector<std::vector<std::uint64_t>> q_of_;  // per block position, Q(P) per allowed set
  // The block of every node: its weights (log_g_, q_of_) stay valid across steps, and its
  // engine is built once, on the first draw.
  bool whole_ready_ = false;
  mutable std::unique_ptr<ExactEngine> whole_engine_;
};

std::unique_ptr<BlockMove> make_block_move(const ScoreTable& table, const ChainConfig& config,
                                           BlockFault fault = BlockFault::kNone);

// Blocks of m nodes fixed before a run (chains/block_settings.cpp): each node with its m - 1
// strongest partners by the pairwise screen (the gain of the single-parent set over the empty
// set, either direction), duplicates dropped. Empty when m < 2 or m >= n.
std::vector<std::vector<int>> strongest_neighbour_blocks(const ScoreTable& table, int m);
// The rate that gives block steps of m nodes `share` of the run time next to local moves.
double choose_block_rate(const ScoreTable& table, int m, double share = 0.5);
// --block-size and --block-rate against the table, the other rates, time and memory.
void check_block_options(const ChainRunOptions& o, const ScoreTable& table,
                         std::uint64_t memory_limit = 0);

}  // namespace covey
