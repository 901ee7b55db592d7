#pragma once
// Internal pieces of the exact engine over all DAGs (docs/exact-engine.md): subset tables of the
// local scores, the two routes that yield the subset weights Z(U) and D_u(X), and the layer
// table the exact sampler walks. Not a public header: engines and tests use exact_posterior.hpp.
#include <bit>
#include <cstdint>
#include <span>
#include <vector>

#include "covey/scores/score_table.hpp"

namespace covey::exact_internal {

// Bits of x at the positions of mask, packed to the low end (software PEXT).
inline std::uint64_t extract_bits(std::uint64_t x, std::uint64_t mask) {
  std::uint64_t out = 0;
  for (int i = 0; mask; mask &= mask - 1, ++i)
    if (x & mask & (~mask + 1)) out |= std::uint64_t{1} << i;
  return out;
}

// The inverse: low bits of k spread to the positions of mask (software PDEP).
inline std::uint64_t deposit_bits(std::uint64_t k, std::uint64_t mask) {
  std::uint64_t out = 0;
  for (; mask && k; mask &= mask - 1, k >>= 1)
    if (k & 1U) out |= mask & (~mask + 1);
  return out;
}

// Removes bit b from y, whether set or not (bits above b move down by one).
inline std::uint64_t drop_bit(std::uint64_t y, int b) {
  const std::uint64_t low = (std::uint64_t{1} << b) - 1;
  return (y & low) | ((y >> (b + 1)) << b);
}

// log of sum over subsets, in place: a[y] <- log sum_{z subset of y} exp(a[z]), over `bits` bits.
void log_zeta_subsets(std::span<double> a, int bits);
// The same with max instead of log-sum-exp.
void max_zeta_subsets(std::span<double> a, int bits);
// Superset version: a[y] <- log sum_{z superset of y} exp(a[z]).
void log_zeta_supersets(std::span<double> a, int bits);

// prod[k] = product of b[j] over the bits j of k, for k < 2^c, built block by block (the upper
// half of each doubling is the lower half times one factor: contiguous, vectorizable).
void subset_products(const double* b, std::size_t c, std::vector<double>& prod);

// Subset tables of the local scores, over global masks of n <= 30 variables. For node v and
// Y subset of V\{v}:
//   hmax(v, Y) = max_{Q subset of Y, Q allowed} s_v(Q)            (-inf when none)
//   log_a(v, Y) = log sum_{Q subset of Y, Q allowed} f_v(Q)        (A_v(Y) of docs/mathematics.md
//   section 5)
// and, when built `with_forced`, for x in Y:
//   log_e(v, x, Y) = log sum_{Q subset of Y, x in Q, Q allowed} f_v(Q)
// (the part of A_v(Y) whose sets contain x: lets the layer DP stay free of subtraction).
class SubsetScores {
 public:
  SubsetScores(const ScoreTable& table, bool with_forced);
  // Dense local weights over a small node set (n = log_weights.size() <= 30), as the exact block
  // move of the chains derives them (docs/mathematics.md, "Exact block moves"):
  // log_weights[v][Q] = log g_v(Q) for every Q subset of V, -inf where Q is not allowed (always
  // where Q holds v). Built with the forced tables (the layered route). Defined in
  // src/exact/exact_block.cpp.
  explicit SubsetScores(const std::vector<std::vector<double>>& log_weights);

  int n() const { return n_; }
  std::uint64_t full() const { return full_; }
  double hmax(int v, std::uint64_t y) const { return hmax_[index(v, y)]; }
  double log_a(int v, std::uint64_t y) const { return log_a_[index(v, y)]; }
  double log_e(int v, int x, std::uint64_t y) const {
    const int xs = x - (x > v);
    return log_e_[((std::size_t(v) * n_ + x) << (n_ - 2)) | drop_bit(drop_bit(y, v), xs)];
  }
  bool has_forced() const { return !log_e_.empty() || n_ < 2; }
  // Allowed parent sets of v as global masks, and their log scores.
  std::span<const std::uint64_t> sets(int v) const { return sets_[v]; }
  std::span<const double> scores(int v) const { return scores_[v]; }
  // Indices (into sets(v)) of v's allowed sets holding x, for sampling a set with x forced.
  std::span<const std::uint32_t> sets_holding(int v, int x) const {
    return holding_[std::size_t(v) * n_ + x];
  }
  double empty_set_score(int v) const { return empty_score_[v]; }

  static std::size_t estimate_bytes(int n, bool with_forced);

 private:
  std::size_t index(int v, std::uint64_t y) const {
    return (std::size_t(v) << (n_ - 1)) | drop_bit(y, v);
  }
  // Fills the subset tables from sets_ and scores_ (holding_ and empty_score_ set too).
  void build_subset_tables(bool with_forced);
  int n_;
  std::uint64_t full_;
  std::vector<std::vector<std::uint64_t>> sets_;
  std::vector<std::vector<double>> scores_;
  std::vector<std::vector<std::uint32_t>> holding_;
  std::vector<double> empty_score_;
  std::vector<double> hmax_, log_a_, log_e_;
};

// Log weight of the best DAG on U (parents inside U), for every U: the common scale of Z(U).
std::vector<double> best_dag_log_weight(const SubsetScores& s);
// Log weight of the best completion of V\P once P is placed (each vertex outside P takes
// parents anywhere, acyclic outside P), for every P: the common scale of completion sums.
std::vector<double> best_completion_log_weight(const SubsetScores& s);

// What both routes hand to the feature assembly.
struct SubsetWeights {
  double log_z = 0;              // log Z(V)
  std::vector<double> log_z_of;  // log Z(U) for every U subset of V
  // log D_u(X) at [u << (n-1) | drop_bit(X, u)] for X subset of V\{u}: total weight of the
  // parent sets of W = V\X\{u} (acyclic on W) in which every vertex of W has a parent in
  // W + {u} -- i.e. W is exactly the set of descendants of u.
  std::vector<double> log_d;
  std::vector<double> other_log_z;  // further evaluations of log Z (for the discrepancy)
  long long clamped = 0;            // signed route: negative sums clamped to 0
};

// ---- The layered route (positive sums only). ----
// A DAG is a sequence of root layers L0, L1, ...: L0 its sources, and each vertex of L(i+1)
// has all its parents in L0..Li and at least one in Li. State (P, L): P placed, L the last
// layer. The completion weight G(P, L) and forward weight F(P, L) run over 3^n states.
struct LayerTable {
  int n = 0;
  std::vector<std::uint64_t> offset;  // offset[P] = sum over P' < P of 2^(n - |P'|)
  std::vector<double> next;           // next[offset[P] + k] = H_P(L'), L' = deposit_bits(k, V\P)
  std::vector<double> beta;           // best_completion_log_weight
  // H_P(L') = G(P + L', L') * exp(sum_{v in L'} hmax(v, P) + beta(P + L') - beta(P)), so that a
  // step from state (P, L) to layer L' has weight prod_{v in L'} b(v, P, L) * H_P(L') where
  // b(v, P, L) = sum_{Q subset P, Q meets L} f_v(Q) / exp(hmax(v, P)).
};

// Runs the completion pass; fills the layer table and the D_u and log Z parts of `out`.
LayerTable layered_completion_pass(const SubsetScores& s, SubsetWeights& out);
// Runs the forward pass: log Z(U) for every U (and log Z(V) again).
std::vector<double> layered_forward_pass(const SubsetScores& s);

// ---- The signed route (sink and source inclusion-exclusion, O(2^n) memory). ----
// log Z(U) for every U by the sink recurrence of docs/mathematics.md section 5 (long double, common
// scale).
std::vector<double> signed_log_z(const SubsetScores& s, long long& clamped);
// log D_u(X) for every u and X by inclusion-exclusion over the vertices of W with no parent in
// W + {u}, from the completion sums B(Y) of the source recurrence.
std::vector<double> signed_log_d(const SubsetScores& s, long long& clamped, double& log_z_b);

}  // namespace covey::exact_internal
