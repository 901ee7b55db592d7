#include "cover_local.hpp"

#include <bit>
#include <cmath>

namespace covey::detail {
namespace {

// log f_v(S) for every subset S of `members` (plus `extra` if >= 0) as a member mask, by one
// table lookup per subset after mapping each member to v's candidate position once.
void lookup_subsets(const ScoreTable& table, int v, const std::vector<int>& members, int extra,
                    double* out) {
  const int m = static_cast<int>(members.size());
  std::vector<long> pos(m);
  for (int j = 0; j < m; ++j)
    pos[j] = members[j] == v ? -1 : table.candidate_position(v, members[j]);
  ParentMask base = 0;
  if (extra >= 0) {
    const int p = table.candidate_position(v, extra);
    if (p < 0) {
      for (unsigned s = 0; s < (1U << m); ++s) out[s] = -INFINITY;
      return;
    }
    base = ParentMask{1} << p;
  }
  for (unsigned s = 0; s < (1U << m); ++s) {
    ParentMask local = base;
    bool ok = true;
    for (unsigned t = s; t; t &= t - 1) {
      const long p = pos[std::countr_zero(t)];
      if (p < 0) {
        ok = false;
        break;
      }
      local |= ParentMask{1} << p;
    }
    out[s] = ok ? table.log_score(v, local) : -INFINITY;
  }
}

}  // namespace

CoverLocalScores cover_local_scores(const ScoreTable& table, const VertexList& cover) {
  CoverLocalScores local;
  local.members = cover;
  complement(table.num_variables(), cover, local.outside);
  const int m = local.m = static_cast<int>(local.members.size());
  const int no = local.num_outside();
  const std::size_t width = std::size_t{1} << m;
  local.leaf.resize(no * width);
  local.inner.resize(m * width);
  local.link.resize(std::size_t(no) * m * width);
  for (int i = 0; i < no; ++i)
    lookup_subsets(table, local.outside[i], local.members, -1, &local.leaf[i * width]);
  for (int j = 0; j < m; ++j) {
    lookup_subsets(table, local.members[j], local.members, -1, &local.inner[j * width]);
    for (int i = 0; i < no; ++i)
      lookup_subsets(table, local.members[j], local.members, local.outside[i],
                     &local.link[(std::size_t(i) * m + j) * width]);
  }
  return local;
}

void add_member_parents(Dag& dag, int child, const std::vector<int>& members, unsigned c_local) {
  for (unsigned t = c_local; t; t &= t - 1) dag.add_edge(members[std::countr_zero(t)], child);
}

void complement(int n, const VertexList& members, std::vector<int>& out) {
  out.clear();
  std::size_t next = 0;
  for (int v = 0; v < n; ++v) {
    if (next < members.size() && members[next] == v) {
      ++next;
      continue;
    }
    out.push_back(v);
  }
}

std::vector<VertexList> cover_sets(int n, int size_min, int size_max) {
  std::vector<VertexList> out;
  std::vector<int> idx;
  for (int size = size_min; size <= size_max && size <= n; ++size) {
    idx.resize(size);
    for (int i = 0; i < size; ++i) idx[i] = i;
    for (;;) {
      out.push_back(idx);
      // next combination in lexicographic order of the index list
      int i = size - 1;
      while (i >= 0 && idx[i] == n - size + i) --i;
      if (i < 0) break;
      ++idx[i];
      for (int j = i + 1; j < size; ++j) idx[j] = idx[j - 1] + 1;
    }
  }
  return out;
}

}  // namespace covey::detail
