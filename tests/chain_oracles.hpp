#pragma once
// Brute-force ground truth for the chain tests (n <= 5): the exact posterior over all DAGs of a
// table by enumeration (for_each_dag, itself checked against OEIS A003024), an independent
// membership test for the cover-bounded class D_k straight from its characterization
// (docs/mathematics.md section 2: C is a vertex cover of the moral graph iff every vertex outside C
// has all its parents in C and every vertex inside C has at most one parent outside C), and an
// exact sampler of w restricted to a class by inversion over the enumerated DAGs.
#include <algorithm>
#include <bit>
#include <cmath>
#include <map>
#include <vector>

#include "covey/chains/structure_chain.hpp"
#include "covey/core/logmath.hpp"
#include "covey/graph/enumerate.hpp"

namespace covey::testing_util {

// D_k by trying every vertex set C with |C| <= k against the characterization.
class BruteForceCoverClass : public DagClass {
 public:
  explicit BruteForceCoverClass(int k) : k_(k) {}
  bool contains(const Dag& dag) const override {
    const int n = dag.size();
    for (std::uint64_t c = 0; c < (std::uint64_t{1} << n); ++c) {
      if (std::popcount(c) > k_) continue;
      bool ok = true;
      for (int v = 0; v < n && ok; ++v) {
        const std::uint64_t outside_parents = dag.parent_mask(v) & ~c;
        if ((c >> v) & 1U)
          ok = std::popcount(outside_parents) <= 1;
        else
          ok = outside_parents == 0;
      }
      if (ok) return true;
    }
    return false;
  }

 private:
  int k_;
};

struct ExactPosterior {
  std::vector<Dag> dags;
  std::vector<double> prob;  // normalized
  std::vector<double> edge;  // n*n: P(u -> v) at [u*n + v]
  std::map<std::vector<std::uint64_t>, std::size_t> index;
};

inline ExactPosterior exact_posterior(const ScoreTable& table, const DagClass* restriction) {
  const int n = table.num_variables();
  ExactPosterior out;
  std::vector<double> logw;
  for_each_dag(table, [&](const Dag& d, double lw) {
    if (restriction && !restriction->contains(d)) return;
    out.index[d.words()] = out.dags.size();
    out.dags.push_back(d);
    logw.push_back(lw);
  });
  const double logz = log_sum_exp(logw);
  out.edge.assign(std::size_t(n) * n, 0.0);
  for (std::size_t g = 0; g < out.dags.size(); ++g) {
    out.prob.push_back(std::exp(logw[g] - logz));
    for (int v = 0; v < n; ++v)
      for (int u = 0; u < n; ++u)
        if (out.dags[g].has_edge(u, v)) out.edge[std::size_t(u) * n + v] += out.prob.back();
  }
  return out;
}

// Exact draws from w restricted to `support`, by inversion over the enumerated DAGs.
class EnumeratedTeleport : public TeleportSource {
 public:
  EnumeratedTeleport(const ScoreTable& table, const DagClass& support)
      : support_(support), exact_(exact_posterior(table, &support)) {
    double acc = 0;
    for (double p : exact_.prob) cumulative_.push_back(acc += p);
  }
  const DagClass& support() const override { return support_; }
  Dag draw(Rng& rng) const override {
    const double u = uniform01(rng) * cumulative_.back();
    const auto it = std::upper_bound(cumulative_.begin(), cumulative_.end(), u);
    const std::size_t g = std::min<std::size_t>(it - cumulative_.begin(), cumulative_.size() - 1);
    return exact_.dags[g];
  }

 private:
  const DagClass& support_;
  ExactPosterior exact_;
  std::vector<double> cumulative_;
};

}  // namespace covey::testing_util
