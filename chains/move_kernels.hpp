#pragma once
// Kernels shared by the moves of StructureChain (chains/structure_chain.cpp, chains/rev_move.cpp).
#include <bit>
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

// accept(rng, exact()) for a log ratio known to lie within `margin` of `screened`, calling exact()
// only when the screen cannot reject: the same decision from the same draws (exact() < 0 whenever
// screened + margin < 0, so accept() would have drawn u as well).
template <class Exact>
bool screened_accept(Rng& rng, double screened, double margin, Exact&& exact) {
  const double bound = screened + margin;
  if (bound >= 0) return accept(rng, exact());
  const double u = uniform01(rng);
  if (u >= std::exp(bound)) return false;
  return u < std::exp(exact());
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

// Number of set bits, branch-free and without a library call (the build targets x86-64 without
// a popcount instruction, where std::popcount calls libgcc).
inline int count_bits(std::uint64_t x) {
  x -= (x >> 1) & 0x5555555555555555ULL;
  x = (x & 0x3333333333333333ULL) + ((x >> 2) & 0x3333333333333333ULL);
  x = (x + (x >> 4)) & 0x0f0f0f0f0f0f0f0fULL;
  return static_cast<int>((x * 0x0101010101010101ULL) >> 56);
}

// Where the sets one toggle away from a node's parent set S lie in the dense arrays of
// ScreenScores (docs/chains.md, "Screening local moves"), by the number j of elements of S below
// the toggled candidate b: S + {b} at add[j] + C(b, j + 1), S - {b} at remove[j]. One cache
// line per node, refilled when the node's set changes, so that a proposal needs no rank loop.
struct alignas(64) ToggleBase {
  static constexpr std::uint32_t kNoAdd = ~std::uint32_t{0};  // add[0]: S has the largest size
  ParentMask set = ~ParentMask{0};  // S (all ones: not filled; never a set of a dense table)
  std::uint32_t add[7] = {};
  std::uint32_t remove[6] = {};
};

// Quantised copies of the log scores that screen local moves (docs/chains.md, "Screening local
// moves"): per node, s_v(S) - max_v as a 16-bit level (multiples of step_v = range_v / 32767) in
// a dense array indexed by the combinatorial rank of S among the subsets of size <= d of v's
// candidates (kMissing for sets not in the table), a twelfth of the table's bytes, so the lookups
// stay in cache; and the exact scores in the same layout, read only for the proposals the screen
// lets through (no hash probe). A screened log ratio (the proposed sets' levels against the
// current sets' exact scores) differs from the exact one by at most margin(v) per node; a
// proposal is rejected on the levels only when its uniform draw lies above exp(screened ratio +
// margins), where the exact ratio would reject it too, and otherwise decided on the exact double
// scores as before. The chain's trajectory is the same draw for draw.
class ScreenScores {
 public:
  static constexpr int kMaxSize = 6;  // largest parent-set size with a dense layout
  static constexpr std::size_t kNone = ~std::size_t{0};

  // Used only when every node's dense array is at most kMaxBlowup times its number of sets
  // (all sets of size <= d of its candidates, or most of them); usable() says whether it is.
  explicit ScreenScores(const ScoreTable& table);
  bool usable() const { return usable_; }

  // s_v(S) exactly into `score` when S is in the table (one index computation for both).
  bool find_exact(int v, ParentMask local, double& score) const {
    const std::size_t at = index(v, local);
    if (at == kNone || exact_[at] == -INFINITY) return false;
    score = exact_[at];
    return true;
  }
  // The screened term of a proposal that gives node v the set at position `at` (from
  // toggled_position) instead of its current set, whose exact score is `current`:
  // level(S') step_v - (current - max_v), within margin(v) of the exact s_v(S') - current.
  // False when S' is not in the table.
  bool screened_term(int v, std::size_t at, double current, double& term) const {
    const std::int16_t level = at == kNone ? kMissing : screen_[at];
    if (level == kMissing) return false;
    const NodeScale& scale = scale_[v];
    term = double(level) * scale.step - (current - scale.top);
    return true;
  }
  double margin(int v) const { return scale_[v].margin; }

  // The positions of the sets one toggle away from v's parent set `set` (in the table).
  void toggle_base(int v, ParentMask set, ToggleBase& out) const;
  // Position of S xor {b} (`toggled` = {b}) for S = base.set, or kNone when larger than any set.
  std::size_t toggled_position(const ToggleBase& base, ParentMask toggled) const {
    const int j = count_bits(base.set & (toggled - 1));
    if (base.set & toggled) return base.remove[j];
    if (base.add[0] == ToggleBase::kNoAdd) return kNone;
    return base.add[j] + binomial_[std::countr_zero(toggled)][j + 1];
  }
  // s_v(S) exactly at a position of a set in the table.
  double exact_at(std::size_t at) const { return exact_[at]; }
  // Position of any set S of v (kNone when larger than any set of the table).
  std::size_t position(int v, ParentMask local) const { return index(v, local); }

 private:
  static constexpr std::size_t kMaxBlowup = 2;  // 10 bytes a slot: at most the table's bytes
  // Position of S in the dense arrays (combinatorial rank among v's subsets of its size), or
  // kNone when S is larger than any set of the table.
  std::size_t index(int v, ParentMask local) const {
    int size = 0;
    std::uint64_t rank = 0;
    for (ParentMask m = local; m; m &= m - 1) {
      if (++size > max_size_) return kNone;
      rank += binomial_[std::countr_zero(m)][size];
    }
    return offset_[std::size_t(v) * (kMaxSize + 2) + size] + rank;
  }
  bool usable_ = false;
  int max_size_ = 0;
  std::uint64_t binomial_[kMaxCandidates + 1][kMaxSize + 1] = {};  // C(b, t)
  std::vector<std::size_t> offset_;  // per node and size s: start of the s-subsets' ranks
  static constexpr std::int16_t kMissing = -32768;  // level of a set not in the table
  static constexpr int kLevels = 32767;             // levels 0 down to -kLevels
  struct NodeScale {
    double step = 1;    // s - max_v is about level * step
    double top = 0;     // max_v
    double margin = 0;  // bound on |screened term - exact term|
  };
  std::vector<std::int16_t> screen_;  // round((s - max_v) / step_v), kMissing when not in the table
  std::vector<double> exact_;         // s
  std::vector<NodeScale> scale_;
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
