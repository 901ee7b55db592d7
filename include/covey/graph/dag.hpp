#pragma once
// DAGs for the exact engines (n <= 64): one parent bitmask per node (bit u of parents[v] means
// the edge u -> v).
#include <cstdint>
#include <string>
#include <vector>

#include "covey/scores/score_table.hpp"

namespace covey {

inline constexpr int kMaxExactVariables = 64;

struct Dag {
  std::vector<std::uint64_t> parents;

  Dag() = default;
  explicit Dag(int n) : parents(static_cast<std::size_t>(n), 0) {}
  int size() const { return static_cast<int>(parents.size()); }
  bool has_edge(int from, int to) const { return (parents[to] >> from) & 1U; }
  void add_edge(int from, int to) { parents[to] |= std::uint64_t{1} << from; }
  void remove_edge(int from, int to) { parents[to] &= ~(std::uint64_t{1} << from); }
  int num_edges() const;
  // Bit v set when v has at least one child.
  std::uint64_t non_sinks() const;
  bool operator==(const Dag&) const = default;
  auto operator<=>(const Dag&) const = default;
};

bool is_acyclic(const Dag& dag);
// A topological order (parents before children); requires acyclic.
std::vector<int> topological_order(const Dag& dag);
// ancestors[v]: bit u set when u ~> v by a directed path of length >= 1.
std::vector<std::uint64_t> ancestor_masks(const Dag& dag);
// log w(G) = sum_v s_v(G_v); -infinity when some parent set is not in the table.
double log_weight(const ScoreTable& table, const Dag& dag);
// Graphviz DOT text with the table's variable names.
std::string to_dot(const Dag& dag, const std::vector<Variable>& variables,
                   const std::string& graph_name = "covey");

// Throws InputError unless the table is small enough for the exact engines (n <= 64).
void require_exact_size(const ScoreTable& table, const char* engine);

}  // namespace covey
