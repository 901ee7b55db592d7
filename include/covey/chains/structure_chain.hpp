#pragma once
// One Markov chain over DAGs (docs/mathematics.md section 6). Target: w(G) = prod_v f_v(G_v) over
// the DAGs whose parent sets are all in the score table, optionally restricted to a class of DAGs
// (the cover-bounded class D_k' of `--cover-limit`). Each step is one of three kernels, chosen with
// fixed probabilities so that each kernel satisfies detailed balance on its own:
//
//  * local move (probability 1 - rev_rate - teleport_rate): draw an ordered candidate pair (u, v)
//    (u a candidate parent of v) uniformly and a fair coin. If u -> v is absent, propose adding
//    it; if present, propose deleting it (heads) or reversing it (tails). Proposal probabilities:
//    add 1/|P|, delete 1/(2|P|), reverse 1/(2|P|), so the Hastings factors are 1/2 for an add,
//    2 for a delete and 1 for a reversal. Cycles, parent sets missing from the table and DAGs
//    outside the class are rejections.
//  * REV (rev_rate): the edge reversal with parent resampling of Grzegorczyk & Husmeier (2008),
//    with their acceptance ratio N(G)/N(G') * Z*(i|G0,j) Z(j|G+) / (Z*(j|G0,i) Z(i|G'+)); see
//    rev_move() in chains/rev_move.cpp for the derivation used here.
//  * teleport (teleport_rate): an independence proposal from an exact sampler of w restricted
//    to a class D_k (the cover-bounded sampler). With proposal weights equal to w, the
//    Metropolis-Hastings ratio w(G') w(G) 1[G in D_k] / (w(G) w(G')) is 1[G in D_k]: the teleport
//    is accepted exactly when the current DAG lies in D_k, and the new state is then independent
//    of the past (a regeneration point).
//  * exact block move (block_rate): a block B of block_size nodes drawn from a fixed
//    distribution (uniform subsets mixed with a family of blocks fixed before the run); the
//    parent sets of B are redrawn jointly from their exact conditional given all other parent
//    sets, through the exact all-DAG engine on B (docs/mathematics.md, "Exact block moves";
//    chains/block_move.cpp). A Gibbs step: always accepted, and under a restriction accepted
//    exactly when the result lies in the class. With block_size = n it is an exact draw from
//    the whole posterior: a regeneration.
//
// Acyclicity is checked with maintained ancestor bitsets (n bits per node, as 64-bit words), so
// an add costs one bit test, a reversal one bit test per parent; accepted moves update the
// ancestor sets of the affected descendants only. Parent sets are local masks over each node's
// candidate list, so score lookups are O(1) (ScoreTable::find). Nothing is allocated in the
// local-move and REV paths (teleports and class tests use the cover module, which may).
#include <array>
#include <cstdint>
#include <limits>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "covey/core/random.hpp"
#include "covey/graph/dag.hpp"
#include "covey/scores/score_table.hpp"

namespace covey {

enum class Move : int { kAdd = 0, kDelete = 1, kReverse = 2, kRev = 3, kTeleport = 4, kBlock = 5 };
inline constexpr int kNumMoves = 6;
// "add", "delete", "reverse", "rev", "teleport", "block" (the names used in files and JSON).
const char* move_name(Move move);
inline const char* move_name(int move) {
  return move_name(static_cast<Move>(move));
}

struct MoveCounts {
  std::array<std::uint64_t, kNumMoves> proposed{};
  std::array<std::uint64_t, kNumMoves> accepted{};
  std::uint64_t total_proposed() const;
  MoveCounts& operator+=(const MoveCounts& other);
  bool operator==(const MoveCounts&) const = default;
};

// A class of DAGs (any n) that a chain may be restricted to, or that a teleport samples from.
class DagClass {
 public:
  virtual ~DagClass() = default;
  virtual bool contains(const Dag& dag) const = 0;
};

// Exact independent draws from w restricted to a class (the teleport proposal).
class TeleportSource {
 public:
  virtual ~TeleportSource() = default;
  // The class the draws come from (membership of the current state decides acceptance).
  virtual const DagClass& support() const = 0;
  virtual Dag draw(Rng& rng) const = 0;
  // An upper bound of log sum_{G in the class} w(G) (the cover engine's log U), or +inf when
  // none is known. Against the score of a DAG the chain can reach it bounds the posterior mass
  // of the class from above: Z_class / Z <= U / w(G) for any DAG G of the table.
  virtual double log_class_weight_bound() const { return std::numeric_limits<double>::infinity(); }
};

struct ChainConfig {
  double rev_rate = 0.0;       // probability of a REV step
  double teleport_rate = 0.0;  // probability of a teleport step (needs `teleport`)
  const TeleportSource* teleport = nullptr;
  const DagClass* restriction = nullptr;  // target restricted to this class, or none
  double block_rate = 0.0;                // probability of an exact block move
  int block_size = 0;                     // m: nodes per block, 1..n (needed with block_rate)
  // Blocks of block_size nodes fixed before the run (may be empty); a block move takes one of
  // them (uniformly) with probability block_family_share, else a uniform m-subset.
  std::vector<std::vector<int>> block_family;
  double block_family_share = 0.5;
  // Rejection skipping (docs/chains.md, "Rejection skipping"): the steps up to the next
  // accepted-or-evaluated move are drawn at once (a geometric wait) instead of one by one. Same
  // law as the plain chain; used through quiet_steps() and event_step() instead of step().
  bool skip_rejections = false;
};

class BlockMove;     // chains/block_move.hpp
struct ChainFaults;  // chains/chain_testing.hpp (the tests' deliberate faults)
class RevTables;     // chains/move_kernels.hpp
class ScreenScores;  // chains/move_kernels.hpp
struct ToggleBase;   // chains/move_kernels.hpp

class StructureChain {
 public:
  // The chain starts at the empty graph when the table allows it (else call set_parents()).
  StructureChain(const ScoreTable& table, const ChainConfig& config);
  ~StructureChain();
  StructureChain(StructureChain&&) noexcept;

  int num_variables() const { return n_; }
  int words_per_node() const { return words_; }  // ceil(n / 64)

  // Sets the state from global parent bitsets: words_per_node() words per node, node-major
  // (bit u of node v's words: edge u -> v). Throws InputError naming `what` when the graph has a
  // cycle, a parent set is not in the table, or it lies outside the restriction class.
  void set_parents(std::span<const std::uint64_t> words, const std::string& what = "start DAG");
  void set_dag(const Dag& dag, const std::string& what = "start DAG");
  // Whether the table allows the empty graph (every node may have no parents).
  bool empty_graph_allowed() const;

  // One transition of the chain. Returns true when a teleport (or a block move over all nodes)
  // regenerated the chain.
  bool step(Rng& rng);

  // Rejection skipping (needs config.skip_rejections; docs/chains.md, "Rejection skipping").
  // quiet_steps() consumes the steps before the next event, at most `budget`, and returns how
  // many: in them the plain chain would only reject local moves, so the state stays. When it
  // returns less than `budget`, the next step is the event: event_step() runs it and returns
  // what step() would. A wait that reaches past `budget` is kept for the next call.
  std::uint64_t quiet_steps(Rng& rng, std::uint64_t budget);
  bool event_step(Rng& rng);
  // The held wait (quiet steps left before the next event), if any, and setting it after
  // set_parents() when a checkpoint is restored, so that a resumed run continues bit for bit.
  std::optional<std::uint64_t> skip_wait() const;
  void set_skip_wait(std::optional<std::uint64_t> wait);

  // The exact block move on a given block (distinct node indices, any order): redraws the
  // parent sets of the block's nodes from their exact conditional given all other parent sets
  // (needs block_size > 0 in the config; the block may have any size up to 30). Returns whether
  // the draw was accepted (always, unless it leaves the restriction class).
  bool block_move_on(std::span<const int> block, Rng& rng);
  // log of the normaliser of that conditional: the sum over the block's parent sets that keep
  // the graph acyclic (all other parent sets as now) of prod_{v in block} f_v(G_v).
  double block_log_normaliser(std::span<const int> block);

  // log w(G), summed node by node in index order from the table's values (so it is identical
  // after a checkpoint restore).
  double log_score() const;
  void write_parents(std::uint64_t* out) const;  // n * words_per_node() words
  std::vector<std::uint64_t> parents_words() const;
  Dag dag() const;
  bool has_edge(int from, int to) const;
  std::uint64_t num_edges() const { return num_edges_; }

  // Whether local moves are screened on quantised scores (docs/chains.md, "Screening local
  // moves").
  bool screens_local_moves() const { return screen_ != nullptr; }

  const MoveCounts& counts() const { return counts_; }
  void set_counts(const MoveCounts& counts) { counts_ = counts; }

  // Recomputes ancestors, scores and edge count from scratch and compares (for tests).
  bool check_invariants() const;

 private:
  friend StructureChain make_faulty_chain(const ScoreTable& table, const ChainConfig& config,
                                          const ChainFaults& faults);
  // `faults`: none (nullptr) in every chain but the tests' (chains/chain_testing.hpp).
  StructureChain(const ScoreTable& table, const ChainConfig& config, const ChainFaults* faults);

  struct Pair {
    std::int32_t from, to;
    std::int8_t pos_in_to;    // position of `from` in to's candidate list
    std::int8_t pos_in_from;  // position of `to` in from's candidate list, or -1
  };
  struct NodeChange {
    int v;
    ParentMask next;
    double score = 0;    // s_v(next), set when accepted
    std::size_t at = 0;  // with the screen: position of `next` in its dense arrays
  };
  template <std::size_t N>
  bool accept_change(Rng& rng, NodeChange (&change)[N], double log_hastings);
  void local_move(Rng& rng);
  // `bounded`: the score ratio was already accepted through the skip bound (rejection
  // skipping), so only cycles, the table and the restriction decide.
  void local_move_on_slot(Rng& rng, std::uint64_t slot, bool bounded);
  void propose_add(Rng& rng, int u, int v, ParentMask bit, bool bounded);
  void propose_delete(Rng& rng, int u, int v, ParentMask bit, bool bounded);
  void propose_reverse(Rng& rng, const Pair& pair, ParentMask bit, bool bounded);
  // Rejection skipping (chains/rejection_skip.cpp).
  void build_skip_bounds();
  void pair_bounds(std::size_t pair, double& coin0, double& coin1) const;
  void set_pair_bounds(std::size_t pair);
  bool skip_bounds_consistent() const;
  bool lookup_score(int v, ParentMask set, double& score) const;
  void refresh_bounds_of(int x, ParentMask changed);
  void refresh_changed_bounds();  // after an event: nodes whose parent set changed
  std::uint64_t draw_bounded_slot(Rng& rng) const;
  bool non_local_event(Rng& rng);
  void rev_move(Rng& rng);
  bool teleport(Rng& rng);
  bool block_move(Rng& rng);  // chains/block_move.cpp
  bool dropped(Move move) const { return (faulty_moves_ >> int(move)) & 1U; }
  bool in_restriction(const Dag& dag) const;

  void load_state(const std::vector<ParentMask>& local, const std::string& what);
  // Moves to an accepted teleport draw without load_state's validation and allocations.
  void load_teleport_draw(const Dag& next);
  void rebuild_ancestors();
  // Ancestor sets of `root` and all its (current) descendants, recomputed from the parent masks.
  void recompute_ancestors_below(int root);
  // Whether the union of v's parents and their ancestor sets equals v's ancestor set.
  bool ancestors_of_parents_equal(int v);
  // Post-order over the marked nodes (mark_ == 1): visit(x) after all of x's marked parents.
  template <class Visit>
  void visit_marked_parents_first(int count, Visit&& visit);
  // Marks root and its descendants (per the ancestor sets); returns how many.
  int mark_descendants(int root, bool include_root);
  // Lists them in list_ without marking; returns how many.
  int list_descendants(int root, bool include_root);
  // After adding the edge u -> v: u and anc(u) join the ancestor sets of v and its descendants.
  void add_ancestors_below(int u, int v);
  // recompute_ancestors_below for one word a row (n <= 64).
  void rebuild_rows_one_word(int root);

  std::uint64_t* anc(int v) { return &anc_[std::size_t(v) * words_]; }
  const std::uint64_t* anc(int v) const { return &anc_[std::size_t(v) * words_]; }
  static bool test(const std::uint64_t* bits, int i) { return (bits[i >> 6] >> (i & 63)) & 1U; }
  int candidate(int v, int pos) const { return cand_[std::size_t(v) * kMaxCandidates + pos]; }

  const ScoreTable* table_;
  ChainConfig config_;
  std::unique_ptr<const ChainFaults> faults_;  // the tests' faults, or none
  unsigned faulty_moves_ = 0;                  // bit m: move m drops its Hastings factor (faults_)
  int n_ = 0;
  int words_ = 0;
  std::uint64_t rev_threshold_ = 0;       // rng() below this: REV
  std::uint64_t teleport_threshold_ = 0;  // rng() below this (and above REV's): teleport
  std::uint64_t block_threshold_ = 0;     // rng() below this (and above teleport's): block move
  std::unique_ptr<BlockMove> block_;      // the block move's tables and scratch, when enabled
  std::unique_ptr<RevTables> rev_;        // REV's weights, when rev_rate > 0
  std::unique_ptr<ScreenScores> screen_;  // scores screening local moves, when usable
  std::vector<ToggleBase> toggle_base_;   // with screen_: per node, where its neighbours' sets lie
  bool mixed_kernels_ = false;
  std::vector<Pair> pairs_;
  std::vector<std::int32_t> cand_;  // n * 64 candidate variables
  std::vector<ParentMask> local_;   // current parent set of each node (local mask)
  std::vector<double> score_;       // its log score
  std::vector<std::uint64_t> anc_;  // n * words: ancestors of each node
  std::uint64_t num_edges_ = 0;
  Dag dag_;  // kept in step when track_dag_ (class tests of teleports and cover limits)
  bool track_dag_ = false;
  MoveCounts counts_;
  // Rejection skipping: per local-move slot s = 2 * pair + coin (local_move's pick) its bound
  // b_s >= a_s; the slots of the pairs into node v are contiguous ([into_first_[v],
  // into_first_[v + 1]) pairs), summed per node; from_pairs_ lists per node the pairs out of it.
  bool skip_ = false;
  double other_rate_ = 0;  // probability of a non-local step (REV, teleport, block)
  std::vector<double> bound_, node_bound_;
  double bound_total_ = 0;
  std::vector<std::uint32_t> into_first_, from_first_, from_pairs_;
  std::vector<ParentMask> bound_parents_;
  std::vector<std::uint8_t> bound_dirty_;
  std::uint64_t wait_ = 0;  // quiet steps left before the next event, when wait_held_
  bool wait_held_ = false;
  // Scratch, sized once.
  std::vector<std::int32_t> list_, stack_;
  std::vector<ParentMask> stack_rest_;
  std::vector<std::uint8_t> mark_;
  std::vector<std::uint64_t> bits_a_, bits_b_, bits_c_, bits_d_;
};

}  // namespace covey
