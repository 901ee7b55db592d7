#pragma once
// Kernels shared by the moves of StructureChain (chains/structure_chain.cpp, chains/rev_move.cpp).
#include <cmath>
#include <cstdint>
#include <vector>

#include "covey/chains/structure_chain.hpp"
#include "covey/core/random.hpp"
#include "covey/scores/score_table.hpp"

namespace covey {

// Metropolis-Hastings acceptance with probability min(1, exp(log_ratio)). Certain acceptances
// draw no random number.
inline bool accept(Rng& rng, double log_ratio) {
  if (log_ratio >= 0) return true;
  return uniform01(rng) < std::exp(log_ratio);
}

// The sums and draws of the REV move (docs/chains.md, "REV in one pass"): per node, the weights
// exp(s - max_v) of its parent sets in double; the two sums REV needs over one node's sets are
// taken in one branch-free pass (chains/rev_move.cpp), keeping partial sums per block of kBlock
// sets so that a draw skips to the block that holds it instead of rescanning the sets.

// f_v(S) summed over v's parent sets S that hold candidate `required` (-1: none required) and no
// bit of `forbidden`, as total * exp(shift).
struct RevSum {
  int node = 0;
  int required = -1;
  ParentMask forbidden = 0;
  int slot = 0;  // the scratch slot of RevTables holding its block partial sums
  double total = 0;
  double shift = 0;
  bool rescaled = false;            // weights exp(s - shift) recomputed (tiny sums)
  const double* weights = nullptr;  // per set of the node: exp(s - shift)
  double log() const;
};

class RevTables {
 public:
  static constexpr std::size_t kBlock = 64;
  static constexpr int kSlots = 4;

  explicit RevTables(const ScoreTable& table);

  // Sets the totals of two sums over v's sets (their required, forbidden and distinct slots
  // given); each keeps its block partial sums (and rescaled weights, if any) in its slot until
  // the next sum into that slot.
  void sum_two(int v, RevSum& a, RevSum& b);
  // Index (among v's parent sets) of a set drawn with probability f_v(S) / total (sum.total > 0;
  // its slot not reused since).
  std::size_t draw(const RevSum& sum, Rng& rng) const;

 private:
  void rescale(RevSum& s);

  const ScoreTable* table_;
  std::vector<std::size_t> set_offset_;  // per node, into weight_
  std::vector<double> weight_;           // exp(s - max_v) per set
  std::vector<double> max_;              // max_v
  std::vector<double> blocks_[kSlots];
  std::vector<double> rescaled_[kSlots];
};

// Used by the moves in both chains/structure_chain.cpp and chains/rev_move.cpp.
template <class Visit>
void StructureChain::visit_marked_parents_first(int count, Visit&& visit) {
  // Iterative depth-first search over parents: a node is visited once all of its marked parents
  // are (marks: 1 pending, 2 on the stack, 0 done or not in the set).
  for (int i = 0; i < count; ++i) {
    const int root = list_[i];
    if (mark_[root] != 1) continue;
    int top = 0;
    stack_[0] = root;
    stack_rest_[0] = local_[root];
    mark_[root] = 2;
    while (top >= 0) {
      const int x = stack_[top];
      ParentMask& rest = stack_rest_[top];
      bool pushed = false;
      while (rest) {
        const int p = candidate(x, std::countr_zero(rest));
        rest &= rest - 1;
        if (mark_[p] == 1) {
          mark_[p] = 2;
          ++top;
          stack_[top] = p;
          stack_rest_[top] = local_[p];
          pushed = true;
          break;
        }
      }
      if (pushed) continue;
      visit(x);
      mark_[x] = 0;
      --top;
    }
  }
}

}  // namespace covey
