// The cover-bounded class (docs/mathematics.md section 2) against brute force: moral graphs from
// the definition, minimum vertex covers and splits by trying every vertex subset, for all DAGs on
// n = 5 (enumeration), and the split bound m(G) <= 2^k on all DAGs with n <= 6.
#include <gtest/gtest.h>

#include <algorithm>
#include <bit>
#include <set>
#include <utility>
#include <vector>

#include "covey/core/random.hpp"
#include "covey/graph/cover_class.hpp"
#include "covey/graph/enumerate.hpp"

namespace covey {
namespace {

// Moral edges straight from the definition: skeleton plus married co-parents.
std::set<std::pair<int, int>> moral_edges_by_definition(const Dag& g) {
  std::set<std::pair<int, int>> e;
  for (int v = 0; v < g.size(); ++v)
    for (int a = 0; a < g.size(); ++a) {
      if (!g.has_edge(a, v)) continue;
      e.insert({std::min(a, v), std::max(a, v)});
      for (int b = a + 1; b < g.size(); ++b)
        if (g.has_edge(b, v)) e.insert({a, b});
    }
  return e;
}

bool covers(std::uint64_t c, const std::set<std::pair<int, int>>& edges) {
  for (auto [a, b] : edges)
    if (!((c >> a) & 1U) && !((c >> b) & 1U)) return false;
  return true;
}

std::vector<int> as_list(std::uint64_t m) {
  std::vector<int> out;
  for (; m; m &= m - 1) out.push_back(std::countr_zero(m));
  return out;
}

const auto all_sets = [](int, std::uint64_t) { return true; };

TEST(CoverClass, AgreesWithBruteForceOnAllDagsWithFiveNodes) {
  // Enumeration of all 29281 DAGs on 5 nodes (OEIS A003024); each cover tried by brute force.
  const int n = 5;
  std::uint64_t checked = 0;
  for_each_dag(n, all_sets, [&](const Dag& g) {
    ++checked;
    const auto edges = moral_edges_by_definition(g);
    const auto adj = moral_graph(g);
    for (int v = 0; v < n; ++v)
      for (int u = 0; u < n; ++u)
        ASSERT_EQ(((adj[v] >> u) & 1U) != 0, edges.count({std::min(u, v), std::max(u, v)}) > 0);
    int min_cover = n;
    for (std::uint64_t c = 0; c < (1U << n); ++c)
      if (covers(c, edges)) min_cover = std::min(min_cover, std::popcount(c));
    ASSERT_EQ(moral_cover_number(g), min_cover);
    for (int k = 0; k < n; ++k) {
      ASSERT_EQ(in_cover_class(g, k), min_cover <= k);
      const auto vc = vertex_cover_at_most(adj, k);
      ASSERT_EQ(vc.has_value(), min_cover <= k);
      if (vc) {
        ASSERT_EQ(std::popcount(*vc), min_cover);
        ASSERT_TRUE(covers(*vc, edges));
      }
      // Splits: covers of size <= k holding no sink, by trying every subset.
      std::vector<std::vector<int>> expected;
      for (std::uint64_t c = 0; c < (1U << n); ++c)
        if (std::popcount(c) <= k && (c & ~g.non_sinks()) == 0 && covers(c, edges))
          expected.push_back(as_list(c));
      std::sort(expected.begin(), expected.end());
      const auto got = splits(g, k);
      ASSERT_EQ(got, expected);
      // docs/mathematics.md section 2: every DAG of D_k has at least one split.
      if (min_cover <= k) {
        ASSERT_FALSE(got.empty());
      }
      const auto canonical = canonical_split(g, k);
      ASSERT_EQ(canonical.has_value(), !expected.empty());
      if (canonical) {
        ASSERT_EQ(*canonical, expected.front());
      }
    }
  });
  EXPECT_EQ(checked, 29281u);
}

TEST(CoverClass, WideGraphsAgreeWithTheirNarrowCopies) {
  // Graphs of more than 64 vertices use wider vertex sets: fixed arrays of words up to 1024
  // vertices, a dynamic bitset beyond. DAGs on 5 nodes (every 8th, and every 64th for the largest
  // graph), placed on 5 vertices of a larger graph across word boundaries (the rest isolated:
  // sinks that are never in a split), must keep their cover number, membership, splits and
  // canonical split, relabelled.
  const int n = 5;
  struct Case {
    int wide_n, stride;
    int place[5];
  };
  const Case cases[] = {{150, 8, {3, 63, 64, 100, 149}}, {1100, 64, {0, 64, 700, 1023, 1099}}};
  for (const Case& c : cases) {
    auto relabel = [&](std::vector<int> list) {
      for (int& v : list) v = c.place[v];
      return list;
    };
    std::uint64_t seen = 0, checked = 0;
    for_each_dag(n, all_sets, [&](const Dag& g) {
      if (seen++ % c.stride != 0) return;
      Dag w(c.wide_n);
      for (int v = 0; v < n; ++v)
        for (int u : g.parents_of(v)) w.add_edge(c.place[u], c.place[v]);
      ASSERT_EQ(w.num_edges(), g.num_edges());
      ASSERT_EQ(moral_cover_number(w), moral_cover_number(g));
      for (int k = 0; k < n; ++k) {
        ASSERT_EQ(in_cover_class(w, k), in_cover_class(g, k));
        std::vector<VertexList> expected;
        for (const VertexList& s : splits(g, k)) expected.push_back(relabel(s));
        ASSERT_EQ(splits(w, k), expected);
        const auto canonical = canonical_split(g, k);
        ASSERT_EQ(canonical_split(w, k),
                  canonical ? std::optional(relabel(*canonical)) : std::nullopt);
      }
      ++checked;
    });
    EXPECT_EQ(checked, (29281u + c.stride - 1) / c.stride) << c.wide_n;
  }
}

TEST(CoverClass, SplitCountAtMostTwoToTheKForAllDagsUpToSixNodes) {
  // m(G) <= 2^k is a fact stated for the published 2023 exact counting and sampling method; it is
  // confirmed here by enumeration of every DAG with n <= 6 (3781503 DAGs for n = 6, OEIS A003024)
  // and every k < n, counting the sink-free covers directly.
  for (int n = 1; n <= 6; ++n) {
    std::vector<int> worst(n, 0);
    std::uint64_t dags = 0;
    for_each_dag(n, all_sets, [&](const Dag& g) {
      ++dags;
      std::uint64_t adj[6] = {0, 0, 0, 0, 0, 0};
      for (int v = 0; v < n; ++v)
        for (std::uint64_t m = g.parent_mask(v); m; m &= m - 1) {
          const int p = std::countr_zero(m);
          adj[v] |= std::uint64_t{1} << p;
          adj[p] |= (std::uint64_t{1} << v) | (g.parent_mask(v) & ~(std::uint64_t{1} << p));
        }
      const std::uint64_t ns = g.non_sinks();
      int count_by_size[7] = {0, 0, 0, 0, 0, 0, 0};
      for (std::uint64_t c = ns;; c = (c - 1) & ns) {
        bool ok = true;
        for (int v = 0; v < n && ok; ++v)
          if (!((c >> v) & 1U) && (adj[v] & ~c)) ok = false;
        if (ok) ++count_by_size[std::popcount(c)];
        if (c == 0) break;
      }
      int m = 0;
      for (int k = 0; k < n; ++k) {
        m += count_by_size[k];
        ASSERT_LE(m, 1 << k) << "n=" << n << " k=" << k;
        worst[k] = std::max(worst[k], m);
      }
    });
    const std::uint64_t robinson[] = {1, 1, 3, 25, 543, 29281, 3781503};
    EXPECT_EQ(dags, robinson[n]);
    for (int k = 0; k < n; ++k)
      RecordProperty("max_splits_n" + std::to_string(n) + "_k" + std::to_string(k), worst[k]);
  }
}

TEST(CoverClass, ListOrderIsLexicographicOnIndexLists) {
  for (std::uint64_t a = 0; a < 64; ++a)
    for (std::uint64_t b = 0; b < 64; ++b) {
      const auto la = as_list(a), lb = as_list(b);
      ASSERT_EQ(cover_list_less(a, b), la < lb) << a << " " << b;
    }
}

TEST(CoverClass, MinimumCoverOfRandomGraphsMatchesBruteForce) {
  Rng rng = make_stream(11, 0);
  for (int trial = 0; trial < 300; ++trial) {
    const int n = 12;
    std::vector<std::uint64_t> adj(n, 0);
    std::set<std::pair<int, int>> edges;
    const double density = 0.1 + 0.3 * uniform01(rng);
    for (int a = 0; a < n; ++a)
      for (int b = a + 1; b < n; ++b)
        if (uniform01(rng) < density) {
          adj[a] |= std::uint64_t{1} << b;
          adj[b] |= std::uint64_t{1} << a;
          edges.insert({a, b});
        }
    int best = n;
    for (std::uint64_t c = 0; c < (1U << n); ++c)
      if (std::popcount(c) < best && covers(c, edges)) best = std::popcount(c);
    for (int k = 0; k <= n; ++k) {
      const auto c = vertex_cover_at_most(adj, k);
      ASSERT_EQ(c.has_value(), best <= k);
      if (c) {
        ASSERT_EQ(std::popcount(*c), best);
        ASSERT_TRUE(covers(*c, edges));
      }
    }
    // Every cover of size <= k inside an allowed set, once each.
    const std::uint64_t allowed = (std::uint64_t{1} << n) - 1 - (std::uint64_t{1} << (trial % n));
    for (int k : {best, best + 1}) {
      std::vector<std::uint64_t> got, want;
      for_each_vertex_cover(adj.data(), n, allowed, k, [&](std::uint64_t c) { got.push_back(c); });
      for (std::uint64_t c = 0; c < (1U << n); ++c)
        if (std::popcount(c) <= k && (c & ~allowed) == 0 && covers(c, edges)) want.push_back(c);
      std::sort(got.begin(), got.end());
      ASSERT_EQ(got, want);
    }
  }
}

}  // namespace
}  // namespace covey
