// The signed route of the exact engine: the sink recurrence for Z(U) (docs/mathematics.md section
// 5), the source recurrence for the completion sums B(Y), and inclusion-exclusion for the
// descendant weights D_u(X). O(2^n) memory and O(n 3^n) time, for tables too large for the layer
// table. Every sum is taken in long double relative to the max-recurrence scale of its target, so
// no term overflows; cancellation is what limits the precision (docs/exact-engine.md).
#include <tbb/parallel_for.h>

#include <atomic>
#include <cmath>

#include "core/progress.hpp"
#include "covey/core/logmath.hpp"
#include "exact_internal.hpp"

namespace covey::exact_internal {
namespace {

std::vector<int> members(std::uint64_t m) {
  std::vector<int> out;
  for (; m; m &= m - 1) out.push_back(std::countr_zero(m));
  return out;
}

double finish_log(long double sum, double scale, long long& clamped) {
  if (sum < 0) {
    ++clamped;
    return kNegInf;
  }
  return sum > 0 && scale != kNegInf ? scale + static_cast<double>(std::log(sum)) : kNegInf;
}

// B(Y) relative to exp(beta(Y)), for every Y: the source recurrence
//   B(Y) = sum_{T nonempty, T subset V\Y} (-1)^(|T|+1) prod_{t in T} A_t(Y) B(Y + T),  B(V) = 1,
// (T runs over sets of sources of the part outside Y: inclusion-exclusion).
std::vector<long double> completion_sums(const SubsetScores& s, const std::vector<double>& beta,
                                         long long& clamped) {
  std::atomic<long long> clamps{0};
  const int n = s.n();
  const std::uint64_t full = s.full();
  std::vector<long double> b(full + 1, 0.0L);
  b[full] = 1.0L;
  std::vector<std::vector<std::uint64_t>> levels(n + 1);
  for (std::uint64_t m = 0; m <= full; ++m) levels[std::popcount(m)].push_back(m);
  for (int level = n - 1; level >= 0; --level) {
    tbb::parallel_for(std::size_t{0}, levels[level].size(), [&](std::size_t idx) {
      const std::uint64_t y = levels[level][idx];
      if (beta[y] == kNegInf) return;
      const std::vector<int> cs = members(full & ~y);
      const std::size_t size = std::size_t{1} << cs.size();
      std::vector<double> la(cs.size());
      for (std::size_t j = 0; j < cs.size(); ++j) la[j] = s.log_a(cs[j], y);
      std::vector<double> lp(size, 0.0);
      std::vector<std::uint64_t> tm(size, 0);
      long double sum = 0.0L;
      for (std::size_t k = 1; k < size; ++k) {
        const int j = std::countr_zero(k);
        lp[k] = lp[k & (k - 1)] + la[j];
        tm[k] = tm[k & (k - 1)] | (std::uint64_t{1} << cs[j]);
        const long double next = b[y | tm[k]];
        if (next == 0 || lp[k] == kNegInf) continue;
        const long double term = next * std::exp(lp[k] + beta[y | tm[k]] - beta[y]);
        sum += (std::popcount(k) & 1) ? term : -term;
      }
      if (sum < 0) ++clamps;
      b[y] = sum > 0 ? sum : 0.0L;
    });
  }
  clamped += clamps.load();
  return b;
}

}  // namespace

std::vector<double> signed_log_z(const SubsetScores& s, long long& clamped) {
  const std::uint64_t full = s.full();
  const std::vector<double> alpha = best_dag_log_weight(s);
  // z[U] = Z(U) / exp(alpha(U)). Pushed forward: when U is reached (ascending order), every
  // proper subset has already contributed.
  std::vector<long double> z(full + 1, 0.0L);
  std::vector<double> log_z(full + 1, kNegInf);
  z[0] = 1.0L;
  Progress progress("exact: sink recurrence");
  for (std::uint64_t y = 0; y <= full; ++y) {
    log_z[y] = finish_log(z[y], alpha[y], clamped);
    if (!(z[y] > 0) || y == full) continue;
    const std::vector<int> cs = members(full & ~y);
    const std::size_t size = std::size_t{1} << cs.size();
    std::vector<double> lp(size, 0.0);
    std::vector<std::uint64_t> tm(size, 0);
    for (std::size_t k = 1; k < size; ++k) {
      const int j = std::countr_zero(k);
      lp[k] = lp[k & (k - 1)] + s.log_a(cs[j], y);
      tm[k] = tm[k & (k - 1)] | (std::uint64_t{1} << cs[j]);
    }
    // Z(Y + T) gets (-1)^(|T|+1) Z(Y) prod_{t in T} A_t(Y): T a set of sinks with parents in Y.
    auto push = [&](std::size_t k) {
      if (lp[k] == kNegInf) return;
      const std::uint64_t u = y | tm[k];
      const long double term = z[y] * std::exp(alpha[y] + lp[k] - alpha[u]);
      z[u] += (std::popcount(k) & 1) ? term : -term;
    };
    if (size >= 4096) {
      tbb::parallel_for(std::size_t{1}, size, push);  // targets differ: no two k share a U
    } else {
      for (std::size_t k = 1; k < size; ++k) push(k);
    }
    if ((y & 1023) == 0) progress.update(static_cast<double>(y), static_cast<double>(full));
  }
  progress.finish();
  return log_z;
}

std::vector<double> signed_log_d(const SubsetScores& s, long long& clamped, double& log_z_b) {
  const int n = s.n();
  const std::uint64_t full = s.full();
  const std::vector<double> beta = best_completion_log_weight(s);
  const std::vector<long double> b = completion_sums(s, beta, clamped);
  log_z_b = b[0] > 0 ? beta[0] + static_cast<double>(std::log(b[0])) : kNegInf;
  if (n == 0) return {};
  const std::size_t per_node = std::size_t{1} << (n - 1);
  std::vector<double> log_d(per_node * n, kNegInf);
  std::vector<long long> clamps(per_node * n, 0);
  // D_u(X) = sum_{T subset W} (-1)^|T| prod_{t in T} A_t(X) B(X + u + T),  W = V \ X \ {u}:
  // inclusion-exclusion over the vertices of W whose parents all lie in X.
  tbb::parallel_for(std::size_t{0}, per_node * n, [&](std::size_t idx) {
    const int u = static_cast<int>(idx / per_node);
    const std::uint64_t k_x = idx % per_node;
    const std::uint64_t low = (std::uint64_t{1} << u) - 1;
    const std::uint64_t x = (k_x & low) | ((k_x & ~low) << 1);
    const std::uint64_t xu = x | (std::uint64_t{1} << u);
    if (beta[xu] == kNegInf) return;
    const std::vector<int> ws = members(full & ~xu);
    const std::size_t size = std::size_t{1} << ws.size();
    std::vector<double> lp(size, 0.0);
    std::vector<std::uint64_t> tm(size, 0);
    long double sum = b[xu];
    for (std::size_t k = 1; k < size; ++k) {
      const int j = std::countr_zero(k);
      lp[k] = lp[k & (k - 1)] + s.log_a(ws[j], x);
      tm[k] = tm[k & (k - 1)] | (std::uint64_t{1} << ws[j]);
      const long double next = b[xu | tm[k]];
      if (next == 0 || lp[k] == kNegInf) continue;
      const long double term = next * std::exp(lp[k] + beta[xu | tm[k]] - beta[xu]);
      sum += (std::popcount(k) & 1) ? -term : term;
    }
    long long c = 0;
    log_d[idx] = finish_log(sum, beta[xu], c);
    clamps[idx] = c;
  });
  for (long long c : clamps) clamped += c;
  return log_d;
}

}  // namespace covey::exact_internal
