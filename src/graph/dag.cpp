#include "covey/graph/dag.hpp"

#include <algorithm>
#include <bit>
#include <cmath>

#include "covey/core/error.hpp"

namespace covey {

void Dag::clear_parents(int v) {
  for (int w = 0; w < words_; ++w) bits_[std::size_t(v) * words_ + w] = 0;
}

void Dag::parents_of(int v, std::vector<int>& out) const {
  out.clear();
  const auto words = parent_words(v);
  for (int w = 0; w < words_; ++w)
    for (std::uint64_t m = words[w]; m; m &= m - 1) out.push_back(64 * w + std::countr_zero(m));
}

std::vector<int> Dag::parents_of(int v) const {
  std::vector<int> out;
  parents_of(v, out);
  return out;
}

int Dag::num_edges() const {
  int e = 0;
  for (auto p : bits_) e += std::popcount(p);
  return e;
}

std::uint64_t Dag::non_sinks() const {
  std::uint64_t m = 0;
  for (auto p : bits_) m |= p;
  return m;
}

namespace {

// Kahn's algorithm: the order in which vertices become sources when placed vertices are removed,
// lowest index first within a round; shorter than n when the graph has a cycle.
std::vector<int> kahn_order(const Dag& dag) {
  const int n = dag.size();
  std::vector<int> pending(n, 0);
  std::vector<std::vector<int>> children(n);
  for (int v = 0; v < n; ++v)
    for (int u : dag.parents_of(v)) {
      children[u].push_back(v);
      ++pending[v];
    }
  std::vector<int> order, round, next;
  order.reserve(n);
  for (int v = 0; v < n; ++v)
    if (!pending[v]) round.push_back(v);
  while (!round.empty()) {
    order.insert(order.end(), round.begin(), round.end());
    next.clear();
    for (int v : round)
      for (int c : children[v])
        if (--pending[c] == 0) next.push_back(c);
    std::sort(next.begin(), next.end());
    round.swap(next);
  }
  return order;
}

}  // namespace

std::vector<int> topological_order(const Dag& dag) {
  std::vector<int> order = kahn_order(dag);
  if (static_cast<int>(order.size()) != dag.size()) throw Error("graph has a directed cycle");
  return order;
}

bool is_acyclic(const Dag& dag) {
  const int n = dag.size();
  if (n > kMaxExactVariables) return static_cast<int>(kahn_order(dag).size()) == n;
  // Narrow graphs (files of many draws): peel the sources round by round on masks.
  std::uint64_t placed = 0;
  for (int round = 0; round < n; ++round) {
    std::uint64_t ready = 0;
    for (int v = 0; v < n; ++v)
      if (!((placed >> v) & 1U) && (dag.parent_mask(v) & ~placed) == 0)
        ready |= std::uint64_t{1} << v;
    if (!ready) return std::popcount(placed) == n;
    placed |= ready;
  }
  return true;
}

std::vector<std::uint64_t> ancestor_masks(const Dag& dag) {
  const std::size_t words = std::size_t(dag.words_per_node());
  std::vector<std::uint64_t> anc(std::size_t(dag.size()) * words, 0);
  for (int v : topological_order(dag)) {
    std::uint64_t* own = anc.data() + std::size_t(v) * words;
    const auto parents = dag.parent_words(v);
    std::copy(parents.begin(), parents.end(), own);
    for (int u : dag.parents_of(v)) {
      const std::uint64_t* theirs = anc.data() + std::size_t(u) * words;
      for (std::size_t w = 0; w < words; ++w) own[w] |= theirs[w];
    }
  }
  return anc;
}

bool local_parent_mask(const ScoreTable& table, const Dag& dag, int v, ParentMask& local) {
  local = 0;
  for (int u : dag.parents_of(v)) {
    const int position = table.candidate_position(v, u);
    if (position < 0) return false;
    local |= ParentMask{1} << position;
  }
  return true;
}

void set_local_parents(const ScoreTable& table, Dag& dag, int v, ParentMask local) {
  dag.clear_parents(v);
  const auto candidates = table.candidates(v);
  for (; local; local &= local - 1) dag.add_edge(candidates[std::countr_zero(local)], v);
}

double log_weight(const ScoreTable& table, const Dag& dag) {
  double total = 0;
  for (int v = 0; v < dag.size(); ++v) {
    ParentMask local = 0;
    if (!local_parent_mask(table, dag, v, local)) return -INFINITY;
    const double s = table.log_score(v, local);
    if (s == -INFINITY) return -INFINITY;
    total += s;
  }
  return total;
}

std::string to_dot(const Dag& dag, const std::vector<Variable>& variables,
                   const std::string& graph_name) {
  auto quote = [](const std::string& s) {
    std::string q = "\"";
    for (char c : s) {
      if (c == '"' || c == '\\') q += '\\';
      q += c;
    }
    return q + "\"";
  };
  std::string out = "digraph " + quote(graph_name) + " {\n";
  for (int v = 0; v < dag.size(); ++v) out += "  " + quote(variables[v].name) + ";\n";
  for (int v = 0; v < dag.size(); ++v)
    for (int u : dag.parents_of(v))
      out += "  " + quote(variables[u].name) + " -> " + quote(variables[v].name) + ";\n";
  return out + "}\n";
}

void require_exact_size(const ScoreTable& table, const char* engine) {
  if (table.num_variables() > kMaxExactVariables)
    throw InputError(std::string(engine) + " supports at most 64 variables; the table has " +
                     std::to_string(table.num_variables()));
}

}  // namespace covey
