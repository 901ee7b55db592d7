#include "covey/graph/cover_class.hpp"

#include <algorithm>
#include <array>
#include <bit>

#include "covey/core/error.hpp"

namespace covey {
namespace {

using Adjacency = std::array<std::uint64_t, kMaxExactVariables>;

constexpr std::uint64_t bit(int v) {
  return std::uint64_t{1} << v;
}

void fill_moral(const Dag& dag, Adjacency& adj) {
  const int n = dag.size();
  std::fill(adj.begin(), adj.begin() + n, 0);
  for (int v = 0; v < n; ++v) {
    const std::uint64_t pa = dag.parents[v];
    adj[v] |= pa;
    for (std::uint64_t m = pa; m; m &= m - 1) {
      const int p = std::countr_zero(m);
      // p is adjacent to its child v and, by marriage, to every other parent of v.
      adj[p] |= bit(v) | (pa & ~bit(p));
    }
  }
}

// Is there a cover of the edges not yet covered by `chosen` with at most `budget` more vertices?
// Branches on the lowest vertex with an uncovered edge: it joins the cover, or all its uncovered
// neighbours do. A vertex with one uncovered neighbour w is resolved by taking w (swapping it for
// w never makes a cover larger). Depth <= budget, so O(2^budget) nodes.
bool find_cover(const std::uint64_t* adj, int n, std::uint64_t chosen, int budget,
                std::uint64_t& out) {
  for (int u = 0; u < n; ++u) {
    if ((chosen >> u) & 1U) continue;
    const std::uint64_t open = adj[u] & ~chosen;
    if (!open) continue;
    if (budget == 0) return false;
    if (std::has_single_bit(open)) return find_cover(adj, n, chosen | open, budget - 1, out);
    if (find_cover(adj, n, chosen | bit(u), budget - 1, out)) return true;
    const int degree = std::popcount(open);
    return degree <= budget && find_cover(adj, n, chosen | open, budget - degree, out);
  }
  out = chosen;
  return true;
}

std::optional<std::uint64_t> minimum_cover(const std::uint64_t* adj, int n, int k) {
  for (int size = 0; size <= k; ++size) {
    std::uint64_t cover = 0;
    if (find_cover(adj, n, 0, size, cover)) return cover;
  }
  return std::nullopt;
}

// Every superset of `chosen` inside `chosen | free` with at most `budget` extra vertices, once.
template <class Visit>
void add_free_vertices(std::uint64_t chosen, std::uint64_t free, int budget, Visit& visit) {
  visit(chosen);
  if (budget == 0) return;
  for (std::uint64_t m = free; m; m &= m - 1) {
    const std::uint64_t b = m & (~m + 1);
    add_free_vertices(chosen | b, m & ~b, budget - 1, visit);
  }
}

// All covers inside `allowed` with |C| <= k, each once: each branch fixes whether one vertex is
// in the cover (`chosen`) or out of it (`excluded`), so two leaves never give the same cover.
template <class Visit>
void enumerate_covers(const std::uint64_t* adj, int n, std::uint64_t allowed, int k,
                      std::uint64_t chosen, std::uint64_t excluded, Visit& visit) {
  const int used = std::popcount(chosen);
  for (int u = 0; u < n; ++u) {
    if ((chosen >> u) & 1U) continue;
    const std::uint64_t open = adj[u] & ~chosen;
    if (!open) continue;
    if (((allowed & ~excluded) >> u) & 1U && used < k)
      enumerate_covers(adj, n, allowed, k, chosen | bit(u), excluded, visit);
    if ((open & ~(allowed & ~excluded)) == 0 && used + std::popcount(open) <= k)
      enumerate_covers(adj, n, allowed, k, chosen | open, excluded | bit(u), visit);
    return;
  }
  add_free_vertices(chosen, allowed & ~chosen & ~excluded, k - used, visit);
}

void check_size(const Dag& dag) {
  if (dag.size() > kMaxExactVariables)
    throw InputError("the cover-bounded class supports at most 64 variables");
}

}  // namespace

std::vector<std::uint64_t> moral_graph(const Dag& dag) {
  check_size(dag);
  Adjacency adj;
  fill_moral(dag, adj);
  return {adj.begin(), adj.begin() + dag.size()};
}

std::optional<std::uint64_t> vertex_cover_at_most(const std::vector<std::uint64_t>& adjacency,
                                                  int k) {
  if (k < 0) return std::nullopt;
  const int n = static_cast<int>(adjacency.size());
  if (n > kMaxExactVariables) throw InputError("vertex cover: at most 64 vertices");
  return minimum_cover(adjacency.data(), n, std::min(k, n));
}

int moral_cover_number(const Dag& dag) {
  check_size(dag);
  Adjacency adj;
  fill_moral(dag, adj);
  return std::popcount(*minimum_cover(adj.data(), dag.size(), dag.size()));
}

bool in_cover_class(const Dag& dag, int k) {
  check_size(dag);
  if (k < 0) return false;
  Adjacency adj;
  fill_moral(dag, adj);
  return minimum_cover(adj.data(), dag.size(), std::min(k, dag.size())).has_value();
}

void for_each_vertex_cover(const std::uint64_t* adjacency, int n, std::uint64_t allowed, int k,
                           const std::function<void(std::uint64_t)>& visit) {
  if (k < 0) return;
  if (n > kMaxExactVariables) throw InputError("vertex cover: at most 64 vertices");
  auto call = [&](std::uint64_t c) { visit(c); };
  enumerate_covers(adjacency, n, allowed, std::min(k, n), 0, 0, call);
}

std::vector<std::uint64_t> splits(const Dag& dag, int k) {
  check_size(dag);
  std::vector<std::uint64_t> out;
  if (k < 0) return out;
  Adjacency adj;
  fill_moral(dag, adj);
  auto collect = [&](std::uint64_t c) { out.push_back(c); };
  enumerate_covers(adj.data(), dag.size(), dag.non_sinks(), std::min(k, dag.size()), 0, 0, collect);
  std::sort(out.begin(), out.end());
  return out;
}

bool cover_list_less(std::uint64_t a, std::uint64_t b) {
  if (a == b) return false;
  const int t = std::countr_zero(a ^ b);  // the first index where the lists differ
  // The list holding t is smaller unless the other one ends before t (then it is a prefix).
  if ((a >> t) & 1U) return (b >> t) != 0;
  return (a >> t) == 0;
}

std::optional<std::uint64_t> canonical_split(const Dag& dag, int k) {
  check_size(dag);
  if (k < 0) return std::nullopt;
  Adjacency adj;
  fill_moral(dag, adj);
  std::optional<std::uint64_t> best;
  auto keep_smallest = [&](std::uint64_t c) {
    if (!best || cover_list_less(c, *best)) best = c;
  };
  enumerate_covers(adj.data(), dag.size(), dag.non_sinks(), std::min(k, dag.size()), 0, 0,
                   keep_smallest);
  return best;
}

}  // namespace covey
