#include "chain_start.hpp"

#include <bit>
#include <numeric>

#include "covey/core/error.hpp"

namespace covey {

std::vector<std::uint64_t> greedy_start(const ScoreTable& table, Rng& rng) {
  const int n = table.num_variables();
  const int words = (n + 63) / 64;
  std::vector<int> order(n), rank(n);
  constexpr int kOrders = 100;
  for (int attempt = 0; attempt < kOrders; ++attempt) {
    std::iota(order.begin(), order.end(), 0);
    for (int i = n - 1; i > 0; --i)
      std::swap(order[i], order[uniform_below(rng, std::uint64_t(i) + 1)]);
    for (int i = 0; i < n; ++i) rank[order[i]] = i;
    std::vector<std::uint64_t> out(std::size_t(n) * words, 0);
    bool feasible = true;
    for (int v = 0; v < n && feasible; ++v) {
      // Candidates placed after v may not be parents.
      const auto cands = table.candidates(v);
      ParentMask later = 0;
      for (std::size_t b = 0; b < cands.size(); ++b)
        if (rank[cands[b]] > rank[v]) later |= ParentMask{1} << b;
      const auto masks = table.parent_sets(v);
      const auto scores = table.log_scores(v);
      long best = -1;
      for (std::size_t k = 0; k < masks.size(); ++k)
        if (!(masks[k] & later) && (best < 0 || scores[k] > scores[best])) best = long(k);
      if (best < 0) {
        feasible = false;
        break;
      }
      for (ParentMask m = masks[best]; m; m &= m - 1) {
        const int u = cands[std::countr_zero(m)];
        out[std::size_t(v) * words + (u >> 6)] |= std::uint64_t{1} << (u & 63);
      }
    }
    if (feasible) return out;
  }
  throw OptionError("{start} greedy: no DAG of the score table fits " + std::to_string(kOrders) +
                    " random node orders (required edges?); use --start FILE");
}

}  // namespace covey
