// The signed formula of docs/mathematics.md section 4 for one split weight W(C, L), kept as an
// independent reference for the positive engine of cover_sampler.cpp:
//   W(C, L) = sum_{R within K} (-1)^|R| Zc(K\R) prod_{r in R} alpha_r(K\R) prod_{x in F} A_x(C\R)
// with K = C + L, F = V \ K, Zc the constrained DAG sum on subsets of K by the sink recurrence.
#include <algorithm>
#include <bit>
#include <cmath>
#include <vector>

#include "covey/core/error.hpp"
#include "covey/exact/cover_sampler.hpp"

namespace covey {

double signed_split_log_weight(const ScoreTable& table, std::uint64_t cover, std::uint64_t links,
                               bool* clamped) {
  using Real = long double;
  const int n = table.num_variables();
  if (n > 64 || (cover & links)) throw InputError("signed split weight: invalid split");
  const std::uint64_t all = n == 64 ? ~std::uint64_t{0} : (std::uint64_t{1} << n) - 1;
  const std::uint64_t core = cover | links;
  std::vector<int> kv;
  for (int v = 0; v < n; ++v)
    if ((core >> v) & 1U) kv.push_back(v);
  const int kk = static_cast<int>(kv.size());
  const unsigned subsets = 1U << kk;
  auto global = [&](unsigned local) {
    std::uint64_t g = 0;
    for (unsigned t = local; t; t &= t - 1) g |= std::uint64_t{1} << kv[std::countr_zero(t)];
    return g;
  };
  std::vector<double> scale(n);
  double scale_sum = 0;
  for (int v = 0; v < n; ++v) {
    const auto scores = table.log_scores(v);
    scale[v] = *std::max_element(scores.begin(), scores.end());
    scale_sum += scale[v];
  }
  auto f = [&](int v, std::uint64_t parents) -> Real {
    const double s = table.log_score_global(v, parents);
    return s == -INFINITY ? Real(0) : std::exp(static_cast<Real>(s) - scale[v]);
  };
  // alpha[a][Y]: allowed parent sets of core vertex a inside Y (members: at most one link
  // parent; links: parents in C only).
  std::vector<Real> alpha(std::size_t(kk) * subsets, 0);
  for (int a = 0; a < kk; ++a) {
    const int v = kv[a];
    const bool member = (cover >> v) & 1U;
    for (unsigned y = 0; y < subsets; ++y) {
      const unsigned within = y & ~(1U << a);
      Real sum = 0;
      for (unsigned q = within;; q = (q - 1) & within) {
        const std::uint64_t g = global(q);
        const int link_parents = std::popcount(g & links);
        if (member ? link_parents <= 1 : link_parents == 0) sum += f(v, g);
        if (q == 0) break;
      }
      alpha[std::size_t(a) * subsets + y] = sum;
    }
  }
  auto product_alpha = [&](unsigned verts, unsigned within) {
    Real p = 1;
    for (unsigned t = verts; t; t &= t - 1)
      p *= alpha[std::size_t(std::countr_zero(t)) * subsets + within];
    return p;
  };
  std::vector<Real> zc(subsets, 0);
  zc[0] = 1;
  for (unsigned x = 1; x < subsets; ++x) {
    Real sum = 0;
    for (unsigned t = x; t; t = (t - 1) & x) {
      const Real term = zc[x & ~t] * product_alpha(t, x & ~t);
      sum += (std::popcount(t) % 2 == 1) ? term : -term;
    }
    zc[x] = sum;
  }
  unsigned c_local = 0;
  for (int a = 0; a < kk; ++a)
    if ((cover >> kv[a]) & 1U) c_local |= 1U << a;
  const std::uint64_t leaves = all & ~core;
  Real w = 0;
  for (unsigned r = 0; r < subsets; ++r) {
    const unsigned rest = (subsets - 1) & ~r;
    Real term = zc[rest] * product_alpha(r, rest);
    // Leaves take parent sets inside C \ R.
    const unsigned allowed = c_local & ~r;
    for (std::uint64_t lm = leaves; lm && term != 0; lm &= lm - 1) {
      const int x = std::countr_zero(lm);
      Real ax = 0;
      for (unsigned q = allowed;; q = (q - 1) & allowed) {
        ax += f(x, global(q));
        if (q == 0) break;
      }
      term *= ax;
    }
    w += (std::popcount(r) % 2 == 0) ? term : -term;
  }
  if (clamped) *clamped = w < 0;
  if (w <= 0) return -INFINITY;
  return scale_sum + static_cast<double>(std::log(w));
}

}  // namespace covey
