// Subset tables of the local scores (zeta transforms in log space) and the max-recurrences that
// give every subset sum of the exact engine its common scale.
#include <tbb/parallel_for.h>

#include <algorithm>
#include <cmath>

#include "covey/core/error.hpp"
#include "covey/core/logmath.hpp"
#include "exact_internal.hpp"

namespace covey::exact_internal {

void log_zeta_subsets(std::span<double> a, int bits) {
  const std::size_t size = std::size_t{1} << bits;
  for (int b = 0; b < bits; ++b) {
    const std::size_t step = std::size_t{1} << b;
    for (std::size_t base = 0; base < size; base += 2 * step)
      for (std::size_t i = base; i < base + step; ++i) a[i + step] = log_add(a[i + step], a[i]);
  }
}

void max_zeta_subsets(std::span<double> a, int bits) {
  const std::size_t size = std::size_t{1} << bits;
  for (int b = 0; b < bits; ++b) {
    const std::size_t step = std::size_t{1} << b;
    for (std::size_t base = 0; base < size; base += 2 * step)
      for (std::size_t i = base; i < base + step; ++i) a[i + step] = std::max(a[i + step], a[i]);
  }
}

void log_zeta_supersets(std::span<double> a, int bits) {
  const std::size_t size = std::size_t{1} << bits;
  for (int b = 0; b < bits; ++b) {
    const std::size_t step = std::size_t{1} << b;
    for (std::size_t base = 0; base < size; base += 2 * step)
      for (std::size_t i = base; i < base + step; ++i) a[i] = log_add(a[i], a[i + step]);
  }
}

std::size_t SubsetScores::estimate_bytes(int n, bool with_forced) {
  if (n <= 0) return 0;
  std::size_t bytes = 2 * sizeof(double) * (std::size_t(n) << (n - 1));
  if (with_forced && n >= 2) bytes += sizeof(double) * ((std::size_t(n) * n) << (n - 2));
  return bytes;
}

SubsetScores::SubsetScores(const ScoreTable& table, bool with_forced)
    : n_(table.num_variables()),
      full_(n_ ? (std::uint64_t{1} << n_) - 1 : 0),
      sets_(n_),
      scores_(n_),
      holding_(std::size_t(n_) * n_),
      empty_score_(n_) {
  if (n_ > 30) throw ResourceError("exact subset tables support at most 30 variables");
  for (int v = 0; v < n_; ++v) {
    sets_[v] = table.global_parent_sets(v);
    const auto ls = table.log_scores(v);
    scores_[v].assign(ls.begin(), ls.end());
    empty_score_[v] = table.log_score_global(v, 0);
    for (std::uint32_t i = 0; i < sets_[v].size(); ++i)
      for (std::uint64_t m = sets_[v][i]; m; m &= m - 1)
        holding_[std::size_t(v) * n_ + std::countr_zero(m)].push_back(i);
  }
  build_subset_tables(with_forced);
}

void SubsetScores::build_subset_tables(bool with_forced) {
  if (n_ == 0) return;
  const std::size_t per_node = std::size_t{1} << (n_ - 1);
  hmax_.assign(per_node * n_, kNegInf);
  log_a_.assign(per_node * n_, kNegInf);
  const bool forced = with_forced && n_ >= 2;
  const std::size_t per_pair = forced ? std::size_t{1} << (n_ - 2) : 0;
  if (forced) log_e_.assign(per_pair * n_ * n_, kNegInf);
  tbb::parallel_for(0, n_, [&](int v) {
    for (std::size_t i = 0; i < sets_[v].size(); ++i) {
      const std::uint64_t q = sets_[v][i];
      hmax_[index(v, q)] = scores_[v][i];
      log_a_[index(v, q)] = scores_[v][i];
      if (!forced) continue;
      for (std::uint64_t m = q; m; m &= m - 1) {
        const int x = std::countr_zero(m);
        const int xs = x - (x > v);
        log_e_[((std::size_t(v) * n_ + x) << (n_ - 2)) | drop_bit(drop_bit(q, v), xs)] =
            scores_[v][i];
      }
    }
    max_zeta_subsets(std::span(hmax_).subspan(v * per_node, per_node), n_ - 1);
    log_zeta_subsets(std::span(log_a_).subspan(v * per_node, per_node), n_ - 1);
    if (forced)
      for (int x = 0; x < n_; ++x)
        if (x != v)
          log_zeta_subsets(
              std::span(log_e_).subspan((std::size_t(v) * n_ + x) * per_pair, per_pair), n_ - 2);
  });
}

std::vector<double> best_dag_log_weight(const SubsetScores& s) {
  const std::uint64_t full = s.full();
  std::vector<double> best(full + 1, kNegInf);
  best[0] = 0;
  for (std::uint64_t u = 1; u <= full; ++u) {
    // Every DAG on U has a sink v; the best DAG is the best on U\v plus v's best parents in U\v.
    double top = kNegInf;
    for (std::uint64_t m = u; m; m &= m - 1) {
      const int v = std::countr_zero(m);
      const std::uint64_t rest = u & ~(std::uint64_t{1} << v);
      top = std::max(top, best[rest] + s.hmax(v, rest));
    }
    best[u] = top;
  }
  return best;
}

std::vector<double> best_completion_log_weight(const SubsetScores& s) {
  const std::uint64_t full = s.full();
  std::vector<double> best(full + 1, kNegInf);
  best[full] = 0;
  for (std::uint64_t p = full; p-- > 0;) {
    // Every completion of V\P has a source v (parents inside P); then complete from P + v.
    double top = kNegInf;
    for (std::uint64_t m = full & ~p; m; m &= m - 1) {
      const int v = std::countr_zero(m);
      top = std::max(top, s.hmax(v, p) + best[p | (std::uint64_t{1} << v)]);
    }
    best[p] = top;
  }
  return best;
}

}  // namespace covey::exact_internal
