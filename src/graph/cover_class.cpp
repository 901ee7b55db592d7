#include "covey/graph/cover_class.hpp"

#include <algorithm>
#include <array>
#include <bit>
#include <boost/dynamic_bitset.hpp>
#include <type_traits>

#include "covey/core/error.hpp"

namespace covey {
namespace {

// The search below is written once over a vertex-set type: one 64-bit word for graphs of at most
// 64 vertices, fixed arrays of words up to 1024 (the chains' class tests run it on every accepted
// proposal, so neither allocates), and a dynamic bitset beyond (the cover-bounded engines take
// any number of variables).
struct NarrowSets {
  using Set = std::uint64_t;
  int n;
  Set empty() const { return 0; }
  static Set with(Set s, int v) { return s | (Set{1} << v); }
  static bool has(const Set& s, int v) { return (s >> v) & 1U; }
  static Set minus(Set a, const Set& b) { return a & ~b; }
  static Set unite(Set a, const Set& b) { return a | b; }
  static bool none(const Set& s) { return s == 0; }
  static int count(const Set& s) { return std::popcount(s); }
  static bool subset(const Set& a, const Set& b) { return (a & ~b) == 0; }
  // The members of s above v.
  static Set above(Set s, int v) { return v >= 63 ? 0 : s & (~Set{0} << (v + 1)); }
  template <class F>
  static void for_each(Set s, F&& f) {
    for (; s; s &= s - 1) f(std::countr_zero(s));
  }
  static bool list_less(Set a, Set b) { return cover_list_less(a, b); }
};

// Up to 64 * W vertices in W words, without allocation (the class tests of chains under a cover
// limit run on every accepted proposal).
template <int W>
struct FixedSets {
  using Set = std::array<std::uint64_t, W>;
  int n;
  Set empty() const { return Set{}; }
  static Set with(Set s, int v) {
    s[v >> 6] |= std::uint64_t{1} << (v & 63);
    return s;
  }
  static bool has(const Set& s, int v) { return (s[v >> 6] >> (v & 63)) & 1U; }
  static Set minus(Set a, const Set& b) {
    for (int w = 0; w < W; ++w) a[w] &= ~b[w];
    return a;
  }
  static Set unite(Set a, const Set& b) {
    for (int w = 0; w < W; ++w) a[w] |= b[w];
    return a;
  }
  static bool none(const Set& s) {
    std::uint64_t any = 0;
    for (int w = 0; w < W; ++w) any |= s[w];
    return any == 0;
  }
  static int count(const Set& s) {
    int c = 0;
    for (int w = 0; w < W; ++w) c += std::popcount(s[w]);
    return c;
  }
  static bool subset(const Set& a, const Set& b) { return none(minus(a, b)); }
  static Set above(Set s, int v) {
    for (int w = 0; w < (v >> 6); ++w) s[w] = 0;
    s[v >> 6] &= (v & 63) == 63 ? 0 : ~std::uint64_t{0} << ((v & 63) + 1);
    return s;
  }
  template <class F>
  static void for_each(const Set& s, F&& f) {
    for (int w = 0; w < W; ++w)
      for (std::uint64_t m = s[w]; m; m &= m - 1) f(64 * w + std::countr_zero(m));
  }
  // Lexicographic order of the ascending member lists (a proper prefix is smaller), as
  // cover_list_less: at the lowest vertex t in exactly one of them, the list holding t is
  // smaller unless the other list has no member above t (it ended before t).
  static bool list_less(const Set& a, const Set& b) {
    for (int w = 0; w < W; ++w)
      if (const std::uint64_t diff = a[w] ^ b[w]) {
        const int t = 64 * w + std::countr_zero(diff);
        return has(a, t) ? !none(above(b, t)) : none(above(a, t));
      }
    return false;
  }
};

struct WideSets {
  using Set = boost::dynamic_bitset<std::uint64_t>;
  int n;
  Set empty() const { return Set(std::size_t(n)); }
  static Set with(Set s, int v) { return s.set(std::size_t(v)); }
  static bool has(const Set& s, int v) { return s.test(std::size_t(v)); }
  static Set minus(Set a, const Set& b) { return a -= b; }
  static Set unite(Set a, const Set& b) { return a |= b; }
  static bool none(const Set& s) { return s.none(); }
  static int count(const Set& s) { return static_cast<int>(s.count()); }
  static bool subset(const Set& a, const Set& b) { return a.is_subset_of(b); }
  static Set above(Set s, int v) {
    for (std::size_t i = 0; i <= std::size_t(v) && i < s.size(); ++i) s.reset(i);
    return s;
  }
  template <class F>
  static void for_each(const Set& s, F&& f) {
    for (auto i = s.find_first(); i != Set::npos; i = s.find_next(i)) f(static_cast<int>(i));
  }
  // Lexicographic order of the ascending member lists (a proper prefix is smaller).
  static bool list_less(const Set& a, const Set& b) {
    auto i = a.find_first(), j = b.find_first();
    for (; i != Set::npos && j != Set::npos; i = a.find_next(i), j = b.find_next(j))
      if (i != j) return i < j;
    return i == Set::npos && j != Set::npos;
  }
};

template <class Sets>
struct CoverSearch {
  using SetsType = Sets;
  using Set = typename Sets::Set;
  Sets sets;
  std::vector<Set> adj;  // moral-graph (or given) adjacency

  // The moral graph: the skeleton plus an edge between every two parents of a common child.
  static CoverSearch moral(const Dag& dag) {
    const int n = dag.size();
    if constexpr (std::is_same_v<Sets, NarrowSets>) {
      CoverSearch s{Sets{n}, std::vector<Set>(std::size_t(n), 0)};
      for (int v = 0; v < n; ++v) {
        const std::uint64_t pa = dag.parent_mask(v);
        s.adj[v] |= pa;
        for (std::uint64_t m = pa; m; m &= m - 1) {
          const int p = std::countr_zero(m);
          s.adj[p] |= (std::uint64_t{1} << v) | (pa & ~(std::uint64_t{1} << p));
        }
      }
      return s;
    }
    CoverSearch s{Sets{n}, std::vector<Set>(std::size_t(n), Sets{n}.empty())};
    std::vector<int> pa;
    for (int v = 0; v < n; ++v) {
      dag.parents_of(v, pa);
      for (int p : pa) {
        s.adj[v] = Sets::with(std::move(s.adj[v]), p);
        s.adj[p] = Sets::with(std::move(s.adj[p]), v);
        // p is adjacent to its child v and, by marriage, to every other parent of v.
        for (int q : pa)
          if (q != p) s.adj[p] = Sets::with(std::move(s.adj[p]), q);
      }
    }
    return s;
  }

  int n() const { return sets.n; }

  // Is there a cover of the edges not yet covered by `chosen` with at most `budget` more
  // vertices? Branches on the lowest vertex with an uncovered edge: it joins the cover, or all
  // its uncovered neighbours do. A vertex with one uncovered neighbour w is resolved by taking w
  // (swapping it for w never makes a cover larger). Depth <= budget, so O(2^budget) nodes.
  bool find_cover(const Set& chosen, int budget, Set& out) const {
    for (int u = 0; u < n(); ++u) {
      if (Sets::has(chosen, u)) continue;
      const Set open = Sets::minus(adj[u], chosen);
      if (Sets::none(open)) continue;
      if (budget == 0) return false;
      const int degree = Sets::count(open);
      if (degree == 1) return find_cover(Sets::unite(chosen, open), budget - 1, out);
      if (find_cover(Sets::with(chosen, u), budget - 1, out)) return true;
      return degree <= budget && find_cover(Sets::unite(chosen, open), budget - degree, out);
    }
    out = chosen;
    return true;
  }

  std::optional<Set> minimum_cover(int k) const {
    for (int size = 0; size <= k; ++size) {
      Set cover = sets.empty();
      if (find_cover(sets.empty(), size, cover)) return cover;
    }
    return std::nullopt;
  }

  // Every superset of `chosen` inside `chosen | free` with at most `budget` extra vertices, once.
  template <class Visit>
  void add_free_vertices(const Set& chosen, const Set& free, int budget, Visit& visit) const {
    visit(chosen);
    if (budget == 0) return;
    Sets::for_each(free, [&](int b) {
      add_free_vertices(Sets::with(chosen, b), Sets::above(free, b), budget - 1, visit);
    });
  }

  // All covers inside `allowed` with |C| <= k, each once: each branch fixes whether one vertex is
  // in the cover (`chosen`) or out of it (`excluded`), so two leaves never give the same cover.
  template <class Visit>
  void enumerate_covers(const Set& allowed, int k, const Set& chosen, const Set& excluded,
                        Visit& visit) const {
    const int used = Sets::count(chosen);
    const Set available = Sets::minus(allowed, excluded);
    for (int u = 0; u < n(); ++u) {
      if (Sets::has(chosen, u)) continue;
      const Set open = Sets::minus(adj[u], chosen);
      if (Sets::none(open)) continue;
      if (Sets::has(available, u) && used < k)
        enumerate_covers(allowed, k, Sets::with(chosen, u), excluded, visit);
      if (Sets::subset(open, available) && used + Sets::count(open) <= k)
        enumerate_covers(allowed, k, Sets::unite(chosen, open), Sets::with(excluded, u), visit);
      return;
    }
    add_free_vertices(chosen, Sets::minus(available, chosen), k - used, visit);
  }

  Set non_sinks(const Dag& dag) const {
    if constexpr (std::is_same_v<Sets, NarrowSets>) return dag.non_sinks();
    Set s = sets.empty();
    for (int v = 0; v < n(); ++v)
      for (int p : dag.parents_of(v)) s = Sets::with(std::move(s), p);
    return s;
  }

  static VertexList list(const Set& s) {
    VertexList out;
    Sets::for_each(s, [&](int v) { out.push_back(v); });
    return out;
  }
};

// Runs f with the moral-graph search of `dag` on the smallest set type that holds its vertices.
template <class F>
decltype(auto) with_moral_search(const Dag& dag, F&& f) {
  const int words = dag.words_per_node();
  if (words <= 1) return f(CoverSearch<NarrowSets>::moral(dag));
  if (words <= 2) return f(CoverSearch<FixedSets<2>>::moral(dag));
  if (words <= 4) return f(CoverSearch<FixedSets<4>>::moral(dag));
  if (words <= 16) return f(CoverSearch<FixedSets<16>>::moral(dag));
  return f(CoverSearch<WideSets>::moral(dag));
}

CoverSearch<NarrowSets> narrow_search(const std::uint64_t* adjacency, int n) {
  if (n > kMaxExactVariables) throw InputError("vertex cover: at most 64 vertices");
  return {NarrowSets{n}, std::vector<std::uint64_t>(adjacency, adjacency + n)};
}

}  // namespace

std::vector<std::uint64_t> moral_graph(const Dag& dag) {
  if (dag.size() > kMaxExactVariables)
    throw InputError("moral_graph: masks hold at most 64 variables");
  return CoverSearch<NarrowSets>::moral(dag).adj;
}

std::optional<std::uint64_t> vertex_cover_at_most(const std::vector<std::uint64_t>& adjacency,
                                                  int k) {
  if (k < 0) return std::nullopt;
  const int n = static_cast<int>(adjacency.size());
  return narrow_search(adjacency.data(), n).minimum_cover(std::min(k, n));
}

std::optional<VertexList> minimum_moral_cover(const Dag& dag, int k) {
  if (k < 0) return std::nullopt;
  return with_moral_search(dag, [&](const auto& search) -> std::optional<VertexList> {
    const auto cover = search.minimum_cover(std::min(k, dag.size()));
    if (!cover) return std::nullopt;
    return search.list(*cover);
  });
}

int moral_cover_number(const Dag& dag) {
  return static_cast<int>(minimum_moral_cover(dag, dag.size())->size());
}

bool in_cover_class(const Dag& dag, int k) {
  if (k < 0) return false;
  return with_moral_search(dag, [&](const auto& search) {
    return search.minimum_cover(std::min(k, dag.size())).has_value();
  });
}

void for_each_vertex_cover(const std::uint64_t* adjacency, int n, std::uint64_t allowed, int k,
                           const std::function<void(std::uint64_t)>& visit) {
  if (k < 0) return;
  const auto search = narrow_search(adjacency, n);
  auto call = [&](std::uint64_t c) { visit(c); };
  search.enumerate_covers(allowed, std::min(k, n), 0, 0, call);
}

std::vector<VertexList> splits(const Dag& dag, int k) {
  std::vector<VertexList> out;
  if (k < 0) return out;
  with_moral_search(dag, [&](const auto& search) {
    auto collect = [&](const auto& c) { out.push_back(search.list(c)); };
    const auto none = search.sets.empty();
    search.enumerate_covers(search.non_sinks(dag), std::min(k, dag.size()), none, none, collect);
  });
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

std::optional<VertexList> canonical_split(const Dag& dag, int k) {
  if (k < 0) return std::nullopt;
  return with_moral_search(dag, [&](const auto& search) -> std::optional<VertexList> {
    using Search = std::decay_t<decltype(search)>;
    std::optional<typename Search::Set> best;
    auto keep_smallest = [&](const auto& c) {
      if (!best || Search::SetsType::list_less(c, *best)) best = c;
    };
    const auto none = search.sets.empty();
    search.enumerate_covers(search.non_sinks(dag), std::min(k, dag.size()), none, none,
                            keep_smallest);
    if (!best) return std::nullopt;
    return search.list(*best);
  });
}

}  // namespace covey
