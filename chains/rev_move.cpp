// The REV move of StructureChain and its tables (chains/move_kernels.hpp; docs/chains.md).
#include <algorithm>
#include <bit>
#include <cmath>
#include <cstring>

#include "covey/chains/structure_chain.hpp"
#include "move_kernels.hpp"

namespace covey {
namespace {

// Below this, a sum of precomputed weights exp(s - max_v) may have lost terms to underflow; it
// is then recomputed with its own maximum as the scale (exact to double precision either way:
// terms that underflow are below 1e-308, far under 1e-250 relative).
constexpr double kTinySum = 1e-250;

// The sums' inner loop, compiled also for AVX2 where the compiler supports function clones.
// Four accumulator lanes per sum (GCC vector extensions, lowered to SSE2 pairs in the default
// clone): lane l adds the sets k = l mod 4 of a block in order, so every build adds in the same
// order and gives identical results. A set's weight is masked to +0.0 without a branch (the
// predicate is data-dependent and would mispredict about half the time).
#if defined(__GNUC__) && defined(__x86_64__) && !defined(__SANITIZE_ADDRESS__)
#define COVEY_VECTOR_CLONES __attribute__((target_clones("avx2", "default")))
#else
#define COVEY_VECTOR_CLONES
#endif

typedef double Lanes __attribute__((vector_size(32)));
typedef std::uint64_t LaneBits __attribute__((vector_size(32)));

// Sets S (masks m) counted by a sum: those with m & (forbidden | required) == required.
struct Filter {
  ParentMask any, required;  // any = forbidden | required
  bool keeps(ParentMask m) const { return (m & any) == required; }
};

// Two sums of weight[k] over the sets k < count, each over the sets its filter keeps, in one pass
// (block partial sums stored in blocks_a / blocks_b).
COVEY_VECTOR_CLONES
void add_two(const ParentMask* masks, const double* weight, std::size_t count, Filter a, Filter b,
             double* blocks_a, double* blocks_b, double* total_a, double* total_b) {
  double sum_a = 0, sum_b = 0;
  for (std::size_t begin = 0, blk = 0; begin < count; begin += RevTables::kBlock, ++blk) {
    const std::size_t end = std::min(count, begin + RevTables::kBlock);
    Lanes acc_a = {0, 0, 0, 0}, acc_b = {0, 0, 0, 0};
    std::size_t k = begin;
    for (; k + 4 <= end; k += 4) {
      LaneBits m, w;
      std::memcpy(&m, masks + k, sizeof m);
      std::memcpy(&w, weight + k, sizeof w);
      acc_a += (Lanes)(w & (LaneBits)((m & a.any) == a.required));
      acc_b += (Lanes)(w & (LaneBits)((m & b.any) == b.required));
    }
    double block_a = (acc_a[0] + acc_a[1]) + (acc_a[2] + acc_a[3]);
    double block_b = (acc_b[0] + acc_b[1]) + (acc_b[2] + acc_b[3]);
    for (; k < end; ++k) {
      if (a.keeps(masks[k])) block_a += weight[k];
      if (b.keeps(masks[k])) block_b += weight[k];
    }
    blocks_a[blk] = block_a;
    blocks_b[blk] = block_b;
    sum_a += block_a;
    sum_b += block_b;
  }
  *total_a = sum_a;
  *total_b = sum_b;
}

Filter filter_of(const RevSum& s) {
  const ParentMask required = s.required < 0 ? 0 : ParentMask{1} << s.required;
  return {s.forbidden | required, required};
}

}  // namespace

double RevSum::log() const {
  return total > 0 ? shift + std::log(total) : -INFINITY;
}

RevTables::RevTables(const ScoreTable& table) : table_(&table) {
  const int n = table.num_variables();
  set_offset_.assign(std::size_t(n) + 1, 0);
  max_.assign(n, 0);
  std::size_t largest = 0;
  for (int v = 0; v < n; ++v) {
    const auto scores = table.log_scores(v);
    set_offset_[v + 1] = set_offset_[v] + scores.size();
    largest = std::max(largest, scores.size());
    max_[v] = *std::max_element(scores.begin(), scores.end());
    for (double s : scores) weight_.push_back(std::exp(s - max_[v]));
  }
  for (int slot = 0; slot < kSlots; ++slot) {
    blocks_[slot].assign(largest / kBlock + 1, 0);
    rescaled_[slot].assign(largest, 0);
  }
}

void RevTables::sum_two(int v, RevSum& a, RevSum& b) {
  for (RevSum* s : {&a, &b}) {
    s->node = v;
    s->shift = max_[v];
    s->rescaled = false;
    s->weights = &weight_[set_offset_[v]];
  }
  add_two(table_->parent_sets(v).data(), a.weights, table_->num_parent_sets(v), filter_of(a),
          filter_of(b), blocks_[a.slot].data(), blocks_[b.slot].data(), &a.total, &b.total);
  for (RevSum* s : {&a, &b})
    if (s->total < kTinySum) rescale(*s);
}

// A tiny or zero sum: recomputed with the largest kept term as the scale so nothing underflows.
void RevTables::rescale(RevSum& s) {
  const auto scores = table_->log_scores(s.node);
  const auto masks = table_->parent_sets(s.node);
  const Filter filter = filter_of(s);
  double top = -INFINITY;
  for (std::size_t k = 0; k < masks.size(); ++k)
    if (filter.keeps(masks[k])) top = std::max(top, scores[k]);
  s.rescaled = true;
  s.total = 0;
  if (top == -INFINITY) return;  // no allowed set
  s.shift = top;
  double* rescaled = rescaled_[s.slot].data();
  for (std::size_t k = 0; k < scores.size(); ++k) rescaled[k] = std::exp(scores[k] - top);
  s.weights = rescaled;
  double* blocks = blocks_[s.slot].data();
  double unused = 0;
  add_two(masks.data(), rescaled, masks.size(), filter, filter, blocks, blocks, &s.total, &unused);
}

std::size_t RevTables::draw(const RevSum& sum, Rng& rng) const {
  const ParentMask* masks = table_->parent_sets(sum.node).data();
  const std::size_t count = table_->num_parent_sets(sum.node);
  const double* blocks = blocks_[sum.slot].data();
  const Filter filter = filter_of(sum);
  const auto weight_of = [&](std::size_t k) {
    return filter.keeps(masks[k]) ? sum.weights[k] : 0.0;
  };
  const double target = uniform01(rng) * sum.total;
  double acc = 0;
  for (std::size_t begin = 0, b = 0; begin < count; begin += kBlock, ++b) {
    if (acc + blocks[b] <= target) {  // not in this block: skip it by its partial sum
      acc += blocks[b];
      continue;
    }
    const std::size_t end = std::min(count, begin + kBlock);
    for (std::size_t k = begin; k < end; ++k) {
      acc += weight_of(k);
      if (acc > target) return k;
    }
  }
  // Rounding at the very end of the cumulative sum: the last set of positive weight.
  for (std::size_t k = count; k-- > 0;)
    if (weight_of(k) > 0) return k;
  return 0;  // unreachable: draw() is called on positive sums only
}

// REV (Grzegorczyk & Husmeier 2008). For the edge i -> j drawn uniformly among the N(G) edges:
// G0 = G with all parents of i and j removed; draw i's new parents from
//   f_i(S) / Z1 over S that contain j and no descendant of i in G0,
// giving G+; then j's new parents from f_j(S) / Z2 over S with no descendant of j in G+. The
// reverse move (edge j -> i of G') passes through the same G0. With p(G) proportional to w(G),
// the f terms cancel and the acceptance ratio is
//   N(G)/N(G') * Z1 * Z2 / (Z1' * Z2'),
// with Z1' = sum of f_j(S) over S containing i and no descendant of j in G0, and Z2' = sum of
// f_i(S) over S with no descendant of i in G'+. The descendant sets come from G's ancestor sets:
//  - desc_G0(j) = desc_G(j) (i is not below j, and j's in-edges do not start paths from j);
//  - desc_G0(i) = the nodes reachable from i by paths avoiding j (j lost its in-edges);
//  - desc_G+(j) = desc_G0(j) + {i} + desc_G0(i) = desc_G(i) + {i} minus {j}, whatever the new
//    parents of i are; and likewise desc_G'+(i) = desc_G(i) (the same set for the reverse move).
// So all four sums are known before drawing, and G' is acyclic by construction.
void StructureChain::rev_move(Rng& rng) {
  ++counts_.proposed[int(Move::kRev)];
  if (num_edges_ == 0) return;
  // The k-th edge in the canonical order (child index, then candidate position): the choice
  // depends on the state only, so a restored chain continues identically.
  std::uint64_t k = uniform_below(rng, num_edges_);
  int j = 0;
  while (k >= std::uint64_t(std::popcount(local_[j]))) k -= std::popcount(local_[j++]);
  ParentMask m = local_[j];
  for (; k; --k) m &= m - 1;
  const int bit_i_in_j = std::countr_zero(m);
  const int i = candidate(j, bit_i_in_j);
  const int pos_j_in_i = table_->candidate_position(i, j);
  if (pos_j_in_i < 0) return;  // j may never be a parent of i: Z1 = 0

  // desc_G(i) -> bits_a_, desc_G(j) -> bits_b_, desc_G0(i) -> bits_c_.
  std::fill(bits_a_.begin(), bits_a_.end(), 0);
  std::fill(bits_b_.begin(), bits_b_.end(), 0);
  std::fill(bits_c_.begin(), bits_c_.end(), 0);
  int count = 0;
  for (int w = 0; w < n_; ++w) {
    const std::uint64_t* aw = anc(w);
    if (test(aw, i)) {
      bits_a_[w >> 6] |= std::uint64_t{1} << (w & 63);
      mark_[w] = 1;
      list_[count++] = w;
    }
    if (test(aw, j)) bits_b_[w >> 6] |= std::uint64_t{1} << (w & 63);
  }
  visit_marked_parents_first(count, [&](int x) {
    if (x == j) return;
    for (ParentMask pm = local_[x]; pm; pm &= pm - 1) {
      const int p = candidate(x, std::countr_zero(pm));
      if (p == i || test(bits_c_.data(), p)) {
        bits_c_[x >> 6] |= std::uint64_t{1} << (x & 63);
        return;
      }
    }
  });

  // Constraint masks over the candidate lists of i and j.
  ParentMask forbid_i_g0 = 0, forbid_i_all = 0, forbid_j_g0 = 0, forbid_j_plus = 0;
  const int ci = static_cast<int>(table_->candidates(i).size());
  for (int b = 0; b < ci; ++b) {
    const int c = candidate(i, b);
    if (test(bits_c_.data(), c)) forbid_i_g0 |= ParentMask{1} << b;
    if (test(bits_a_.data(), c)) forbid_i_all |= ParentMask{1} << b;
  }
  const int cj = static_cast<int>(table_->candidates(j).size());
  for (int b = 0; b < cj; ++b) {
    const int c = candidate(j, b);
    if (test(bits_b_.data(), c)) forbid_j_g0 |= ParentMask{1} << b;
    if (c == i || test(bits_a_.data(), c)) forbid_j_plus |= ParentMask{1} << b;
  }
  // One pass over i's sets gives Z1 and Z2', one over j's gives Z2 and Z1'.
  RevSum z1{.required = pos_j_in_i, .forbidden = forbid_i_g0, .slot = 0};
  RevSum z2r{.forbidden = forbid_i_all, .slot = 1};  // holds the current set of i
  rev_->sum_two(i, z1, z2r);
  if (z1.total <= 0) return;
  RevSum z2{.forbidden = forbid_j_plus, .slot = 2};
  RevSum z1r{.required = bit_i_in_j, .forbidden = forbid_j_g0, .slot = 3};  // holds j's set
  rev_->sum_two(j, z2, z1r);
  if (z2.total <= 0) return;
  const std::size_t k_i = rev_->draw(z1, rng);
  const std::size_t k_j = rev_->draw(z2, rng);
  const ParentMask new_i = table_->parent_sets(i)[k_i], new_j = table_->parent_sets(j)[k_j];
  const double s_i = table_->log_scores(i)[k_i], s_j = table_->log_scores(j)[k_j];
  const std::uint64_t edges_after = num_edges_ - std::popcount(local_[i]) -
                                    std::popcount(local_[j]) + std::popcount(new_i) +
                                    std::popcount(new_j);
  double log_ratio;
  if (dropped(Move::kRev)) {
    log_ratio = (s_i - score_[i]) + (s_j - score_[j]);
  } else {
    log_ratio = std::log(double(num_edges_)) - std::log(double(edges_after)) + z1.log() + z2.log() -
                z1r.log() - z2r.log();
  }
  if (!accept(rng, log_ratio)) return;
  if (track_dag_) {
    set_local_parents(*table_, dag_, i, new_i);
    set_local_parents(*table_, dag_, j, new_j);
    if (!in_restriction(dag_)) {
      set_local_parents(*table_, dag_, i, local_[i]);
      set_local_parents(*table_, dag_, j, local_[j]);
      return;
    }
  }
  ++counts_.accepted[int(Move::kRev)];
  local_[i] = new_i;
  local_[j] = new_j;
  score_[i] = s_i;
  score_[j] = s_j;
  num_edges_ = edges_after;
  // Affected: i, j and their descendants before and after, all among i and desc_G(i).
  recompute_ancestors_below(i);
}

}  // namespace covey
