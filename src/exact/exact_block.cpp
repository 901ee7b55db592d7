// The exact engine's entry point for dense local weights over a small node set: the weights
// g_v(Q) that the exact block move of the chains derives for its block at every step
// (docs/mathematics.md, "Exact block moves"). Only the subset tables differ from a score table's;
// the layered passes and the sampler are the engine's own (src/exact/exact_layered.cpp,
// src/exact/exact_posterior.cpp).
#include <cmath>
#include <string>

#include "covey/core/error.hpp"
#include "covey/core/logmath.hpp"
#include "exact_internal.hpp"

namespace covey::exact_internal {

SubsetScores::SubsetScores(const std::vector<std::vector<double>>& log_weights)
    : n_(static_cast<int>(log_weights.size())),
      full_(n_ ? (std::uint64_t{1} << n_) - 1 : 0),
      sets_(n_),
      scores_(n_),
      holding_(std::size_t(n_) * n_),
      empty_score_(n_) {
  if (n_ > 30) throw ResourceError("exact subset tables support at most 30 variables");
  for (int v = 0; v < n_; ++v) {
    const std::vector<double>& g = log_weights[v];
    if (g.size() != full_ + 1)
      throw Error("dense local weights: node " + std::to_string(v) + " has " +
                  std::to_string(g.size()) + " entries, not 2^" + std::to_string(n_));
    empty_score_[v] = g[0];
    for (std::uint64_t q = 0; q <= full_; ++q) {
      if (g[q] == kNegInf) continue;
      if ((q >> v) & 1U) throw Error("dense local weights: a parent set holds its own node");
      const auto i = static_cast<std::uint32_t>(sets_[v].size());
      sets_[v].push_back(q);
      scores_[v].push_back(g[q]);
      for (std::uint64_t m = q; m; m &= m - 1)
        holding_[std::size_t(v) * n_ + std::countr_zero(m)].push_back(i);
    }
  }
  build_subset_tables(true);
}

}  // namespace covey::exact_internal
