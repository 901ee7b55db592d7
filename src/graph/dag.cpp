#include "covey/graph/dag.hpp"

#include <bit>
#include <cmath>

#include "covey/core/error.hpp"

namespace covey {

int Dag::num_edges() const {
  int e = 0;
  for (auto p : parents) e += std::popcount(p);
  return e;
}

std::uint64_t Dag::non_sinks() const {
  std::uint64_t m = 0;
  for (auto p : parents) m |= p;
  return m;
}

std::vector<int> topological_order(const Dag& dag) {
  // Kahn's algorithm on parent masks: repeatedly take the vertices whose parents are all placed.
  const int n = dag.size();
  std::vector<int> order;
  order.reserve(n);
  std::uint64_t placed = 0;
  while (static_cast<int>(order.size()) < n) {
    bool progressed = false;
    for (int v = 0; v < n; ++v) {
      if ((placed >> v) & 1U) continue;
      if ((dag.parents[v] & ~placed) == 0) {
        order.push_back(v);
        placed |= std::uint64_t{1} << v;
        progressed = true;
      }
    }
    if (!progressed) throw Error("graph has a directed cycle");
  }
  return order;
}

bool is_acyclic(const Dag& dag) {
  const int n = dag.size();
  std::uint64_t placed = 0;
  for (int round = 0; round < n; ++round) {
    std::uint64_t ready = 0;
    for (int v = 0; v < n; ++v)
      if (!((placed >> v) & 1U) && (dag.parents[v] & ~placed) == 0) ready |= std::uint64_t{1} << v;
    if (!ready) return std::popcount(placed) == n;
    placed |= ready;
  }
  return true;
}

std::vector<std::uint64_t> ancestor_masks(const Dag& dag) {
  std::vector<std::uint64_t> anc(dag.parents.size(), 0);
  for (int v : topological_order(dag)) {
    std::uint64_t a = dag.parents[v];
    for (std::uint64_t m = dag.parents[v]; m; m &= m - 1) a |= anc[std::countr_zero(m)];
    anc[v] = a;
  }
  return anc;
}

double log_weight(const ScoreTable& table, const Dag& dag) {
  double total = 0;
  for (int v = 0; v < dag.size(); ++v) {
    const double s = table.log_score_global(v, dag.parents[v]);
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
    for (std::uint64_t m = dag.parents[v]; m; m &= m - 1)
      out += "  " + quote(variables[std::countr_zero(m)].name) + " -> " + quote(variables[v].name) +
             ";\n";
  return out + "}\n";
}

void require_exact_size(const ScoreTable& table, const char* engine) {
  if (table.num_variables() > kMaxExactVariables)
    throw InputError(std::string(engine) + " supports at most 64 variables; the table has " +
                     std::to_string(table.num_variables()));
}

}  // namespace covey
