// Rejection skipping for the local moves of StructureChain (docs/chains.md, "Rejection
// skipping"): the plain chain's step, split into a Bernoulli "event" with probability
// e = p_other + (1 - p_other) B / (2|P|) and the rest, which only rejects a local move. The
// waiting time to the next event is geometric(e); at an event the non-local kernel runs with
// probability p_other / e, else a local-move slot s is drawn with probability b_s / B and
// accepted with probability a_s / b_s. Here b_s is exactly a_s except for cycles and the
// restriction class (which the bound ignores), so the event accepts s exactly when the move is
// valid.
#include <cmath>
#include <limits>
#include <numbers>

#include "chain_testing.hpp"
#include "covey/chains/structure_chain.hpp"
#include "covey/core/error.hpp"
#include "move_kernels.hpp"

namespace covey {
namespace {

constexpr std::uint64_t kForever = std::numeric_limits<std::uint64_t>::max();

// Number of failures before the first success of Bernoulli(e) trials: floor(log U / log(1 - e))
// with U uniform on (0, 1] (kForever when e = 0: the chain cannot leave its state).
std::uint64_t geometric_wait(Rng& rng, double e) {
  if (e >= 1) return 0;
  if (e <= 0) return kForever;
  const double u = 1.0 - uniform01(rng);  // (0, 1]
  const double wait = std::floor(std::log(u) / std::log1p(-e));
  return wait >= 0x1.0p63 ? kForever : static_cast<std::uint64_t>(wait);
}

}  // namespace

void StructureChain::build_skip_bounds() {
  skip_ = true;
  // The exact probability of a non-local step in step(): rng() < block_threshold_.
  other_rate_ = mixed_kernels_ ? std::ldexp(double(block_threshold_), -64) : 0.0;
  into_first_.assign(n_ + 1, 0);
  for (const Pair& p : pairs_) ++into_first_[p.to + 1];
  for (int v = 0; v < n_; ++v) into_first_[v + 1] += into_first_[v];
  from_first_.assign(n_ + 1, 0);
  for (const Pair& p : pairs_) ++from_first_[p.from + 1];
  for (int v = 0; v < n_; ++v) from_first_[v + 1] += from_first_[v];
  from_pairs_.assign(pairs_.size(), 0);
  std::vector<std::uint32_t> next(from_first_.begin(), from_first_.end() - 1);
  for (std::size_t i = 0; i < pairs_.size(); ++i)
    from_pairs_[next[pairs_[i].from]++] = static_cast<std::uint32_t>(i);
  bound_.assign(2 * pairs_.size(), 0);
  node_bound_.assign(n_, 0);
  bound_dirty_.assign(n_, 0);
  bound_parents_ = local_;
  for (std::size_t p = 0; p < pairs_.size(); ++p) set_pair_bounds(p);
  bound_total_ = 0;
  for (int v = 0; v < n_; ++v) {
    for (std::size_t s = 2 * into_first_[v]; s < 2 * into_first_[v + 1]; ++s)
      node_bound_[v] += bound_[s];
    bound_total_ += node_bound_[v];
  }
}

bool StructureChain::lookup_score(int v, ParentMask set, double& score) const {
  if (screen_) return screen_->find_exact(v, set, score);  // dense arrays: no hash probe
  const long idx = table_->find(v, set);
  if (idx < 0) return false;
  score = table_->log_scores(v)[idx];
  return true;
}

// b_s = min(1, exp(score gain + log Hastings)) from the exact scores, with cycles and the
// restriction ignored; 0 when the move can never be accepted (a parent set outside the table, a
// reversal the table forbids, an add whose opposite edge is present, which closes a cycle).
// Both slots of pair p at once: coin 0 (slot 2p) and coin 1 (slot 2p + 1).
void StructureChain::pair_bounds(std::size_t p, double& coin0, double& coin1) const {
  const Pair& pair = pairs_[p];
  const int u = pair.from, v = pair.to;
  const ParentMask bit = ParentMask{1} << pair.pos_in_to;
  const auto bound = [](double log_ratio) { return log_ratio >= 0 ? 1.0 : std::exp(log_ratio); };
  double next_v = 0, next_u = 0;
  if (!(local_[v] & bit)) {  // an add on both coin sides
    double b = 0;
    const bool opposite = pair.pos_in_from >= 0 && ((local_[u] >> pair.pos_in_from) & 1U);
    if (!opposite && lookup_score(v, local_[v] | bit, next_v))
      b = bound(next_v - score_[v] + (dropped(Move::kAdd) ? 0.0 : -std::numbers::ln2));
    coin0 = coin1 = b;
    return;
  }
  if (!lookup_score(v, local_[v] & ~bit, next_v)) {
    coin0 = coin1 = 0;
    return;
  }
  const double gain_v = next_v - score_[v];
  coin1 = bound(gain_v + (dropped(Move::kDelete) ? 0.0 : std::numbers::ln2));
  const bool reversible = pair.pos_in_from >= 0 &&
                          lookup_score(u, local_[u] | (ParentMask{1} << pair.pos_in_from), next_u);
  coin0 = reversible ? bound(gain_v + next_u - score_[u]) : 0.0;
}

void StructureChain::set_pair_bounds(std::size_t p) {
  pair_bounds(p, bound_[2 * p], bound_[2 * p + 1]);
}

// Whether the kept bounds, node sums and total are those of the parent sets they were made
// for, recomputed from scratch (for check_invariants()).
bool StructureChain::skip_bounds_consistent() const {
  if (bound_parents_ != local_) return true;  // refreshed at the next quiet_steps/event_step
  double total = 0;
  for (int v = 0; v < n_; ++v) {
    double sum = 0;
    for (std::size_t p = into_first_[v]; p < into_first_[v + 1]; ++p) {
      double coin0 = 0, coin1 = 0;
      pair_bounds(p, coin0, coin1);
      if (coin0 != bound_[2 * p] || coin1 != bound_[2 * p + 1]) return false;
      sum += coin0 + coin1;
    }
    if (std::abs(sum - node_bound_[v]) > 1e-9 * (1 + sum)) return false;
    total += node_bound_[v];
  }
  return std::abs(total - bound_total_) <= 1e-9 * (1 + total);
}

// The slots whose bound depends on x's parent set, which changed in the bits `changed`: the
// pairs into x, and of the pairs x -> w out of x those whose reversal is possible (x -> w
// present: the reversal's gain at x) or whose add has its opposite edge w -> x among `changed`.
// The adds of the other pairs out of x depend on P_w alone.
void StructureChain::refresh_bounds_of(int x, ParentMask changed) {
  for (std::size_t p = into_first_[x]; p < into_first_[x + 1]; ++p) set_pair_bounds(p);
  bound_dirty_[x] = 1;
  for (std::uint32_t i = from_first_[x]; i < from_first_[x + 1]; ++i) {
    const Pair& pair = pairs_[from_pairs_[i]];
    const bool present = (local_[pair.to] >> pair.pos_in_to) & 1U;
    const bool opposite_changed = pair.pos_in_from >= 0 && ((changed >> pair.pos_in_from) & 1U);
    if (!present && !opposite_changed) continue;
    set_pair_bounds(from_pairs_[i]);
    bound_dirty_[pair.to] = 1;
  }
}

// Brings the bounds up to the current state: refreshes the nodes whose parent set differs from
// the one the bounds were computed for, then re-sums the touched nodes from their slots (no
// running sums, so no rounding drift) and the total. A change outside an event (set_parents,
// block_move_on) also drops a held wait, which was drawn for the old state.
void StructureChain::refresh_changed_bounds() {
  bool changed = false;
  for (int x = 0; x < n_; ++x) {
    if (local_[x] == bound_parents_[x]) continue;
    refresh_bounds_of(x, local_[x] ^ bound_parents_[x]);
    bound_parents_[x] = local_[x];
    changed = true;
  }
  if (!changed) return;
  bound_total_ = 0;
  for (int v = 0; v < n_; ++v) {
    if (bound_dirty_[v]) {
      bound_dirty_[v] = 0;
      double sum = 0;
      for (std::size_t s = 2 * into_first_[v]; s < 2 * into_first_[v + 1]; ++s) sum += bound_[s];
      node_bound_[v] = sum;
    }
    bound_total_ += node_bound_[v];
  }
  wait_held_ = false;
}

std::uint64_t StructureChain::quiet_steps(Rng& rng, std::uint64_t budget) {
  if (!skip_) throw Error("quiet_steps: the chain was built without skip_rejections");
  refresh_changed_bounds();
  if (!wait_held_) {
    const double local_rate =
        pairs_.empty() ? 0.0 : bound_total_ / (2.0 * static_cast<double>(pairs_.size()));
    wait_ = geometric_wait(rng, other_rate_ + (1 - other_rate_) * local_rate);
    wait_held_ = true;
  }
  if (wait_ >= budget) {
    if (wait_ != kForever) wait_ -= budget;
    return budget;
  }
  const std::uint64_t quiet = wait_;
  wait_ = 0;
  return quiet;
}

std::optional<std::uint64_t> StructureChain::skip_wait() const {
  if (!skip_ || !wait_held_ || bound_parents_ != local_) return std::nullopt;
  return wait_;
}

void StructureChain::set_skip_wait(std::optional<std::uint64_t> wait) {
  if (!skip_) {
    if (wait) throw Error("set_skip_wait: the chain was built without skip_rejections");
    return;
  }
  refresh_changed_bounds();  // first: a state set since would drop the wait again
  wait_held_ = wait.has_value();
  wait_ = wait.value_or(0);
}

// Slot s with probability b_s / B (B > 0): the node into which the pair points by its share of
// B, then the slot within it. Under the tests' fault skip_uniform_events a uniform slot instead.
std::uint64_t StructureChain::draw_bounded_slot(Rng& rng) const {
  if (faults_ && faults_->skip_uniform_events) return uniform_below(rng, bound_.size());
  double target = uniform01(rng) * bound_total_;
  // The node: the first whose running sum passes the target, or (rounding) the last with a
  // positive sum; B > 0 guarantees one.
  int v = -1;
  for (int w = 0; w < n_; ++w) {
    if (node_bound_[w] <= 0) continue;
    v = w;
    if (target < node_bound_[w]) break;
    target -= node_bound_[w];
  }
  std::size_t last = 0;
  for (std::size_t s = 2 * into_first_[v]; s < 2 * into_first_[v + 1]; ++s) {
    if (bound_[s] <= 0) continue;
    last = s;
    if (target < bound_[s]) return s;
    target -= bound_[s];
  }
  return last;  // rounding: the node's last slot with a positive bound
}

// The non-local kernel as step() chooses it, given that the step is not local: rng() uniform
// below block_threshold_, against the same thresholds.
bool StructureChain::non_local_event(Rng& rng) {
  const std::uint64_t r = uniform_below(rng, block_threshold_);
  if (r < rev_threshold_) {
    rev_move(rng);
    return false;
  }
  if (r < teleport_threshold_) return teleport(rng);
  return block_move(rng);
}

bool StructureChain::event_step(Rng& rng) {
  if (!skip_) throw Error("event_step: the chain was built without skip_rejections");
  refresh_changed_bounds();
  wait_held_ = false;
  const double local_part = pairs_.empty() ? 0.0
                                           : (1 - other_rate_) * bound_total_ /
                                                 (2.0 * static_cast<double>(pairs_.size()));
  bool regenerated = false;
  if (other_rate_ > 0 && uniform01(rng) * (other_rate_ + local_part) < other_rate_)
    regenerated = non_local_event(rng);
  else
    local_move_on_slot(rng, draw_bounded_slot(rng), true);
  refresh_changed_bounds();
  return regenerated;
}

}  // namespace covey
