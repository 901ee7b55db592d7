#pragma once
// The cover-bounded class D_k (docs/mathematics.md section 2): DAGs whose moral graph has a vertex
// cover of size <= k. Moral graph, minimum vertex cover by bounded search tree, membership, splits.
// The functions on a Dag take any number of variables; those on adjacency masks at most 64.
#include <cstdint>
#include <functional>
#include <optional>
#include <vector>

#include "covey/graph/dag.hpp"

namespace covey {

// A set of vertices as its ascending index list (covers hold at most k vertices).
using VertexList = std::vector<int>;

// Undirected adjacency masks of the moral graph (n <= 64): the skeleton plus an edge between every
// two parents of a common child.
std::vector<std::uint64_t> moral_graph(const Dag& dag);

// A vertex cover of the undirected graph `adjacency` with at most k vertices, if one exists
// (bounded search tree, O(2^k * edges)); the returned cover has minimum size.
std::optional<std::uint64_t> vertex_cover_at_most(const std::vector<std::uint64_t>& adjacency,
                                                  int k);

// A minimum vertex cover of the moral graph of G, if one has at most k vertices.
std::optional<VertexList> minimum_moral_cover(const Dag& dag, int k);

// Size of a minimum vertex cover of the moral graph.
int moral_cover_number(const Dag& dag);

// Membership in D_k.
bool in_cover_class(const Dag& dag, int k);

// All splits of G for bound k: covers C of M(G) with |C| <= k containing no sink of G, in
// lexicographic order of their lists. Empty when G is not in D_k.
std::vector<VertexList> splits(const Dag& dag, int k);

// Calls visit(C) once for every vertex cover C of `adjacency` (n <= 64 vertices) with C inside
// `allowed` and |C| <= k. Bounded search tree: branch on a vertex being in or out of the cover.
void for_each_vertex_cover(const std::uint64_t* adjacency, int n, std::uint64_t allowed, int k,
                           const std::function<void(std::uint64_t)>& visit);

// The order that picks canonical splits: the lexicographic order of the covers as ascending
// lists of vertex indices (so {0,3} < {0,3,5} < {1}, and the empty cover is the smallest), on
// masks; VertexList's operator< is the same order.
bool cover_list_less(std::uint64_t a, std::uint64_t b);

// G's canonical split for bound k: the smallest split under cover_list_less, or nullopt when G
// is not in D_k. The exact sampler accepts a draw iff it came from this split.
std::optional<VertexList> canonical_split(const Dag& dag, int k);

}  // namespace covey
