// The layered route of the exact engine: a DP over root layers with positive sums only
// (docs/exact-engine.md). One pass computes the completion weights G(P, L) -- giving Z, the
// descendant weights D_u(X) and the table the exact sampler walks -- and one pass the forward
// weights F(P, L), giving Z(U) for every U. Each pass touches 4^n (state, next layer) pairs.
#include <tbb/parallel_for.h>

#include <algorithm>
#include <cmath>

#include "core/progress.hpp"
#include "covey/core/logmath.hpp"
#include "exact_internal.hpp"

namespace covey::exact_internal {
namespace {

std::vector<std::vector<std::uint64_t>> masks_by_size(int n) {
  std::vector<std::vector<std::uint64_t>> levels(n + 1);
  for (std::uint64_t m = 0; m < (std::uint64_t{1} << n); ++m) levels[std::popcount(m)].push_back(m);
  return levels;
}

// The vertices of a mask, ascending.
std::vector<int> members(std::uint64_t m) {
  std::vector<int> out;
  for (; m; m &= m - 1) out.push_back(std::countr_zero(m));
  return out;
}

// Per-state work space: for a placed set X with complement C = {c_0 < c_1 < ...}, the factors
// b(c_j, X, L) for every last layer L subset of X, relative to exp(hmax(c_j, X)). Built
// incrementally: L = L0 + {x} with x its lowest vertex, and the sets meeting L either meet L0
// or avoid L0 and hold x -- the forced sums log_e(c_j, x, X \ L0). No subtraction.
class LayerFactors {
 public:
  LayerFactors(const SubsetScores& s, std::uint64_t x_set)
      : s_(s), x_set_(x_set), xs_(members(x_set)), cs_(members(s.full() & ~x_set)) {
    const std::size_t c = cs_.size();
    hmax_.resize(c);
    for (std::size_t j = 0; j < c; ++j) hmax_[j] = s.hmax(cs_[j], x_set);
    const std::size_t layers = std::size_t{1} << xs_.size();
    factors_.assign(layers * c, 0.0);
    layer_mask_.assign(layers, 0);
  }
  const std::vector<int>& complement() const { return cs_; }
  const std::vector<double>& hmax() const { return hmax_; }
  std::size_t num_layers() const { return layer_mask_.size(); }
  // Computes the factors of layer counter i >= 1 (requires those of i & (i - 1)).
  void compute(std::size_t i) {
    const std::size_t c = cs_.size();
    const std::size_t i0 = i & (i - 1);
    const int x = xs_[std::countr_zero(i)];
    layer_mask_[i] = layer_mask_[i0] | (std::uint64_t{1} << x);
    const std::uint64_t avoid = x_set_ & ~layer_mask_[i0];
    double* out = factors_.data() + i * c;
    const double* base = factors_.data() + i0 * c;
    for (std::size_t j = 0; j < c; ++j) {
      const double add =
          hmax_[j] == kNegInf ? 0.0 : std::exp(s_.log_e(cs_[j], x, avoid) - hmax_[j]);
      out[j] = base[j] + add;
    }
  }
  std::uint64_t layer(std::size_t i) const { return layer_mask_[i]; }
  const double* factors(std::size_t i) const { return factors_.data() + i * cs_.size(); }

 private:
  const SubsetScores& s_;
  std::uint64_t x_set_;
  std::vector<int> xs_, cs_;
  std::vector<double> hmax_;
  std::vector<double> factors_;
  std::vector<std::uint64_t> layer_mask_;
};

}  // namespace

void subset_products(const double* b, std::size_t c, std::vector<double>& prod) {
  prod.resize(std::size_t{1} << c);
  prod[0] = 1.0;
  for (std::size_t j = 0; j < c; ++j) {
    const std::size_t half = std::size_t{1} << j;
    const double bj = b[j];
    double* out = prod.data() + half;
    for (std::size_t t = 0; t < half; ++t) out[t] = prod[t] * bj;
  }
}

namespace {

// sum over k < 2^c of prod_{j in k} b[j] * h[k], by folding one bit at a time from the top:
// h'[t] = h[t] + b[j] h[t + 2^j]. Positive terms summed as a tree: relative error about c ulp.
double fold_products(const double* h, const double* b, std::size_t c,
                     std::vector<double>& scratch) {
  if (c == 0) return h[0];
  std::size_t half = std::size_t{1} << (c - 1);
  scratch.resize(half);
  double* w = scratch.data();
  const double top = b[c - 1];
  for (std::size_t t = 0; t < half; ++t) w[t] = h[t] + top * h[t + half];
  for (std::size_t j = c - 1; j-- > 0;) {
    half = std::size_t{1} << j;
    const double bj = b[j];
    for (std::size_t t = 0; t < half; ++t) w[t] += bj * w[t + half];
  }
  return w[0];
}

// Factors of the start state: the sources take the empty parent set (relative to its score).
std::vector<double> source_factors(const SubsetScores& s) {
  std::vector<double> b(s.n());
  for (int v = 0; v < s.n(); ++v) b[v] = s.empty_set_score(v) == kNegInf ? 0.0 : 1.0;
  return b;
}

template <class Body>
void run_levels(int n, bool descending, const char* label, const Body& body) {
  const auto levels = masks_by_size(n);
  Progress progress(label);
  for (int step = 0; step <= n; ++step) {
    const int level = descending ? n - step : step;
    const auto& masks = levels[level];
    tbb::parallel_for(std::size_t{0}, masks.size(), [&](std::size_t i) { body(masks[i]); });
    progress.update(step + 1, n + 1);
  }
  progress.finish();
}

}  // namespace

LayerTable layered_completion_pass(const SubsetScores& s, SubsetWeights& out) {
  const int n = s.n();
  const std::uint64_t full = s.full();
  LayerTable t;
  t.n = n;
  t.beta = best_completion_log_weight(s);
  t.offset.resize(full + 1);
  std::size_t total = 0;
  for (std::uint64_t p = 0; p <= full; ++p) {
    t.offset[p] = total;
    total += std::size_t{1} << (n - std::popcount(p));
  }
  t.next.assign(total, 0.0);
  out.log_d.assign(n ? std::size_t(n) << (n - 1) : 0, kNegInf);

  run_levels(n, true, "exact: completion pass", [&](std::uint64_t x_set) {
    LayerFactors lf(s, x_set);
    const std::size_t c = lf.complement().size();
    const double* next_x = t.next.data() + t.offset[x_set];
    std::vector<double> scratch;
    // G(X, L) relative to exp(beta(X)); H_X(empty) is 0, so the fold sums nonempty layers only.
    auto completion = [&](const double* b) -> long double {
      if (c == 0) return 1.0L;
      return fold_products(next_x, b, c, scratch);
    };
    if (x_set == 0) {
      const long double g = completion(source_factors(s).data());
      out.log_z = g > 0 ? t.beta[0] + static_cast<double>(std::log(g)) : kNegInf;
      return;
    }
    for (std::size_t i = 1; i < lf.num_layers(); ++i) {
      lf.compute(i);
      const long double g = completion(lf.factors(i));
      const std::uint64_t layer = lf.layer(i);
      const std::uint64_t placed = x_set & ~layer;
      // H_placed(layer) = g * exp(sum_{v in layer} hmax(v, placed) + beta(X) - beta(placed)).
      double value = 0;
      if (g > 0 && t.beta[placed] != kNegInf) {
        double e = t.beta[x_set] - t.beta[placed];
        for (std::uint64_t m = layer; m; m &= m - 1) e += s.hmax(std::countr_zero(m), placed);
        value = static_cast<double>(g * std::exp(e));
      }
      t.next[t.offset[placed] + extract_bits(layer, full & ~placed)] = value;
      if ((layer & (layer - 1)) == 0) {
        const int u = std::countr_zero(layer);
        out.log_d[(std::size_t(u) << (n - 1)) | drop_bit(placed, u)] =
            g > 0 ? t.beta[x_set] + static_cast<double>(std::log(g)) : kNegInf;
      }
    }
  });
  return t;
}

std::vector<double> layered_forward_pass(const SubsetScores& s) {
  const int n = s.n();
  const std::uint64_t full = s.full();
  const std::vector<double> alpha = best_dag_log_weight(s);
  // forward[offset[X] + k]: F(X, L) relative to exp(alpha(X)), L = deposit_bits(k, X).
  std::vector<std::size_t> offset(full + 1);
  std::size_t total = 0;
  for (std::uint64_t x = 0; x <= full; ++x) {
    offset[x] = total;
    total += std::size_t{1} << std::popcount(x);
  }
  std::vector<double> forward(total, 0.0);

  run_levels(n, false, "exact: forward pass", [&](std::uint64_t p) {
    if (p == full) return;
    LayerFactors lf(s, p);
    const auto& cs = lf.complement();
    const std::size_t c = cs.size();
    const std::size_t size = std::size_t{1} << c;
    // acc(L') = sum over last layers L of F(P, L) prod_{v in L'} b(v, P, L): summed in double
    // blocks of kBlock layers, flushed into long double.
    constexpr int kBlock = 32;
    std::vector<long double> acc(size, 0.0L);
    std::vector<double> block(size, 0.0), prod;
    int pending = 0;
    auto flush = [&] {
      for (std::size_t k = 1; k < size; ++k) acc[k] += block[k];
      std::fill(block.begin(), block.end(), 0.0);
      pending = 0;
    };
    auto push = [&](double f, const double* b) {
      subset_products(b, c, prod);
      for (std::size_t k = 0; k < size; ++k) block[k] += f * prod[k];
      if (++pending == kBlock) flush();
    };
    if (p == 0) {
      push(1.0, source_factors(s).data());
    } else {
      for (std::size_t i = 1; i < lf.num_layers(); ++i) {
        lf.compute(i);
        const double f = forward[offset[p] + i];
        if (f > 0) push(f, lf.factors(i));
      }
    }
    flush();
    // F(P + L', L') = acc(L') * exp(alpha(P) + sum_{v in L'} hmax(v, P) - alpha(P + L')).
    std::vector<double> hsum(size, 0.0);
    std::vector<std::uint64_t> next(size, 0);
    for (std::size_t k = 1; k < size; ++k) {
      const int j = std::countr_zero(k);
      hsum[k] = hsum[k & (k - 1)] + lf.hmax()[j];
      next[k] = next[k & (k - 1)] | (std::uint64_t{1} << cs[j]);
      const std::uint64_t x = p | next[k];
      double value = 0;
      if (acc[k] > 0 && alpha[x] != kNegInf) {
        const double e = alpha[p] + hsum[k] - alpha[x];
        value = static_cast<double>(acc[k] * std::exp(e));
      }
      forward[offset[x] + extract_bits(next[k], x)] = value;
    }
  });

  std::vector<double> log_z_of(full + 1, kNegInf);
  log_z_of[0] = 0;
  for (std::uint64_t u = 1; u <= full; ++u) {
    long double sum = 0;
    const std::size_t size = std::size_t{1} << std::popcount(u);
    for (std::size_t k = 1; k < size; ++k) sum += forward[offset[u] + k];
    log_z_of[u] = sum > 0 ? alpha[u] + static_cast<double>(std::log(sum)) : kNegInf;
  }
  return log_z_of;
}

}  // namespace covey::exact_internal
