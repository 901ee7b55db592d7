#pragma once
// DAGs of any size, stored as parent bitsets: node v's parents are bits of the words
// [v * words_per_node(), (v + 1) * words_per_node()) (bit u of the set means the edge u -> v).
// With n <= 64 that is one word per node, and the exact engines for small n read it as a mask
// (parent_mask). The cover-bounded engines, teleports and cover limits take any n.
#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include "covey/scores/score_table.hpp"

namespace covey {

// The all-DAG engines, enumeration and the narrow mask accessors work with at most 64 variables.
inline constexpr int kMaxExactVariables = 64;

class Dag {
 public:
  // 64-bit words per parent set of a graph with n vertices (also the layout of chain draws).
  static constexpr int words_for(int n) { return (n + 63) / 64; }

  Dag() = default;
  explicit Dag(int n)
      : n_(n), words_(words_for(n)), bits_(static_cast<std::size_t>(n) * words_, 0) {}
  int size() const { return n_; }
  int words_per_node() const { return words_; }
  bool has_edge(int from, int to) const { return (word(to, from) >> (from & 63)) & 1U; }
  void add_edge(int from, int to) { word(to, from) |= bit(from); }
  void remove_edge(int from, int to) { word(to, from) &= ~bit(from); }
  void clear_parents(int v);
  // Parents of v, ascending; the second form refills `out` (no allocation once it has room).
  std::vector<int> parents_of(int v) const;
  void parents_of(int v, std::vector<int>& out) const;
  std::span<const std::uint64_t> parent_words(int v) const {
    return {bits_.data() + std::size_t(v) * words_, std::size_t(words_)};
  }
  std::span<std::uint64_t> parent_words(int v) {
    return {bits_.data() + std::size_t(v) * words_, std::size_t(words_)};
  }
  // All parent sets, node-major (n * words_per_node() words): the layout of draws files.
  const std::vector<std::uint64_t>& words() const { return bits_; }
  // Narrow DAGs only (n <= 64): v's parent set as one mask.
  std::uint64_t parent_mask(int v) const { return bits_[std::size_t(v)]; }
  std::uint64_t& parent_mask(int v) { return bits_[std::size_t(v)]; }
  int num_edges() const;
  // Narrow DAGs only: bit v set when v has at least one child.
  std::uint64_t non_sinks() const;
  bool operator==(const Dag&) const = default;
  auto operator<=>(const Dag&) const = default;

 private:
  static std::uint64_t bit(int u) { return std::uint64_t{1} << (u & 63); }
  std::uint64_t word(int v, int u) const { return bits_[std::size_t(v) * words_ + (u >> 6)]; }
  std::uint64_t& word(int v, int u) { return bits_[std::size_t(v) * words_ + (u >> 6)]; }

  int n_ = 0;
  int words_ = 0;
  std::vector<std::uint64_t> bits_;
};

bool is_acyclic(const Dag& dag);
// A topological order (parents before children); requires acyclic.
std::vector<int> topological_order(const Dag& dag);
// Ancestor sets in the layout of parent sets (words_per_node() words per node, node-major; with
// n <= 64 ancestors[v] is a mask): bit u of v's set when u ~> v by a path of length >= 1.
std::vector<std::uint64_t> ancestor_masks(const Dag& dag);
// v's parent set as a mask over v's candidate list; false when a parent is not a candidate.
bool local_parent_mask(const ScoreTable& table, const Dag& dag, int v, ParentMask& local);
// Sets v's parents to the candidates of v in `local` (the inverse of local_parent_mask).
void set_local_parents(const ScoreTable& table, Dag& dag, int v, ParentMask local);
// log w(G) = sum_v s_v(G_v); -infinity when some parent set is not in the table.
double log_weight(const ScoreTable& table, const Dag& dag);
// Graphviz DOT text with the table's variable names.
std::string to_dot(const Dag& dag, const std::vector<Variable>& variables,
                   const std::string& graph_name = "covey");

// Throws InputError unless the table is small enough for the all-DAG engines (n <= 64).
void require_exact_size(const ScoreTable& table, const char* engine);

}  // namespace covey
