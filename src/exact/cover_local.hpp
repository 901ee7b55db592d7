#pragma once
// Internal to the cover-bounded engines (best DAG and exact sampler): the local log scores that
// matter once a cover set C is fixed. With C fixed, an outside vertex u can only take a parent
// set P inside C, and a member c of C takes Q inside C plus at most one outside vertex
// (docs/mathematics.md section 2). Subsets of C are "C-local" masks: bit j = j-th member of C
// (ascending).
#include <cstdint>
#include <vector>

#include "covey/graph/cover_class.hpp"
#include "covey/graph/dag.hpp"
#include "covey/scores/score_table.hpp"

namespace covey::detail {

// The largest cover bound the engines accept (C-local masks, 4^k DP states, k! member orders).
inline constexpr int kMaxCoverBound = 10;

struct CoverLocalScores {
  int m = 0;                 // |C|
  std::vector<int> members;  // C, ascending
  std::vector<int> outside;  // V \ C, ascending
  // log f_u(P) of outside vertex i and P within C: leaf[(i << m) | P]; -inf when not allowed.
  std::vector<double> leaf;
  // log f_c(Q) of member j and Q within C \ {c_j}: inner[(j << m) | Q]; -inf if not allowed or
  // Q holds j.
  std::vector<double> inner;
  // log f_c(Q + {u}) of member j with outside vertex i as extra parent: link[((i*m + j) << m) | Q].
  std::vector<double> link;

  int num_outside() const { return static_cast<int>(outside.size()); }
  double leaf_score(int i, unsigned p) const { return leaf[(std::size_t(i) << m) | p]; }
  double inner_score(int j, unsigned q) const { return inner[(std::size_t(j) << m) | q]; }
  double link_score(int i, int j, unsigned q) const {
    return link[((std::size_t(i) * m + j) << m) | q];
  }
};

// Looks up every score above (O(n 2^k k) table lookups) for the cover set `cover` (ascending).
CoverLocalScores cover_local_scores(const ScoreTable& table, const VertexList& cover);

// Adds the edges member -> child for the members of `members` (ascending positions) in the
// C-local mask `c_local`.
void add_member_parents(Dag& dag, int child, const std::vector<int>& members, unsigned c_local);

// The complement of an ascending vertex list in {0..n-1}, ascending, into `out`.
void complement(int n, const VertexList& members, std::vector<int>& out);

// All subsets of {0..n-1} with size_min..size_max elements, in increasing size and, within a
// size, increasing as ascending index lists; the engines' fixed enumeration order.
std::vector<VertexList> cover_sets(int n, int size_min, int size_max);

}  // namespace covey::detail
