// The exact block move (docs/mathematics.md, "Exact block moves"): the reduction of the block's
// conditional to a DAG posterior on the block, and the chain's step that uses it.
#include "block_move.hpp"

#include <algorithm>
#include <array>
#include <bit>
#include <cmath>
#include <limits>
#include <numeric>

#include "covey/core/error.hpp"
#include "covey/core/logmath.hpp"
#include "covey/exact/exact_posterior.hpp"

namespace covey {
namespace {

// Q(P) of a parent set that is not valid (it would close a cycle through the block).
constexpr std::uint64_t kInvalid = ~std::uint64_t{0};

ExactOptions block_engine_options(bool draws) {
  ExactOptions options;
  options.features = false;
  options.draws = draws;
  // The run checked the block size against the limits before it started (--block-size).
  options.limits.max_bytes = std::numeric_limits<std::size_t>::max() / 2;
  options.limits.max_seconds = std::numeric_limits<double>::infinity();
  return options;
}

}  // namespace

BlockMove::BlockMove(const ScoreTable& table, const ChainConfig& config, BlockFault fault)
    : table_(&table),
      n_(table.num_variables()),
      block_size_(config.block_size),
      family_(config.block_family),
      fault_(fault) {
  if (block_size_ < 0 || block_size_ > std::min(n_, kMaxBlockSize))
    throw OptionError("{block_size}: " + std::to_string(block_size_) + " is not between 1 and " +
                      std::to_string(std::min(n_, kMaxBlockSize)));
  if (config.block_rate > 0 && block_size_ < 1)
    throw OptionError("{block_rate} > 0 needs {block_size} of at least 1");
  for (auto& b : family_) {
    std::sort(b.begin(), b.end());
    const bool distinct = std::adjacent_find(b.begin(), b.end()) == b.end();
    if (int(b.size()) != block_size_ || !distinct || b.front() < 0 || b.back() >= n_)
      throw InputError("block family: every block needs " + std::to_string(block_size_) +
                       " distinct variables");
  }
  if (!family_.empty()) {
    const double share = std::clamp(config.block_family_share, 0.0, 1.0);
    family_threshold_ =
        share >= 1 ? ~std::uint64_t{0} : static_cast<std::uint64_t>(std::ldexp(share, 64));
  }
  position_.assign(n_, -1);
  reach_.assign(n_, 0);
  reached_.assign(n_, 0);
  order_.resize(n_);
}

const std::vector<int>& BlockMove::draw_block(Rng& rng) {
  if (!family_.empty() && rng() < family_threshold_) {
    block_ = family_[uniform_below(rng, family_.size())];
    return block_;
  }
  // A uniform m-subset: the first m places of a partial Fisher-Yates shuffle of 0..n-1 (started
  // from the identity every time, so the draw depends on the stream alone).
  std::iota(order_.begin(), order_.end(), 0);
  if (block_size_ < n_)
    for (int i = 0; i < block_size_; ++i)
      std::swap(order_[i], order_[i + uniform_below(rng, std::uint64_t(n_ - i))]);
  block_.assign(order_.begin(), order_.begin() + block_size_);
  std::sort(block_.begin(), block_.end());
  return block_;
}

// R(o): the block nodes that reach o by a path whose nodes after the first all lie outside the
// block. Every edge into a node outside the block is fixed, and the fixed edges form a DAG, so
// the recursion over o's parents ends.
std::uint64_t BlockMove::reach(int o, std::span<const ParentMask> local) {
  if (reached_[o]) return reach_[o];
  const auto cands = table_->candidates(o);
  std::uint64_t r = 0;
  for (ParentMask m = local[o]; m; m &= m - 1) {
    const int p = cands[std::countr_zero(m)];
    r |= position_[p] >= 0 ? std::uint64_t{1} << position_[p] : reach(p, local);
  }
  reach_[o] = r;
  reached_[o] = 1;
  reached_list_.push_back(o);
  return r;
}

void BlockMove::derive(std::span<const ParentMask> local, std::span<const int> block) {
  const int m = static_cast<int>(block.size());
  if (m < 1 || m > kMaxBlockSize) throw Error("block move: block size out of range");
  if (holds_whole(block)) return;
  whole_ready_ = false;
  for (int o : reached_list_) reached_[o] = 0;
  reached_list_.clear();
  std::fill(position_.begin(), position_.end(), -1);
  nodes_.assign(block.begin(), block.end());
  for (int i = 0; i < m; ++i) position_[block[i]] = i;
  const std::size_t sets = std::size_t{1} << m;
  log_g_.resize(m);
  q_of_.resize(m);
  std::vector<long double> acc(sets);
  for (int i = 0; i < m; ++i) {
    const int v = block[i];
    const auto cands = table_->candidates(v);
    // What each candidate parent adds to Q(P): itself when in the block, else R(candidate).
    std::array<std::uint64_t, kMaxCandidates> adds{};
    for (std::size_t b = 0; b < cands.size(); ++b) {
      const int c = cands[b];
      adds[b] = position_[c] >= 0                           ? std::uint64_t{1} << position_[c]
                : fault_ == BlockFault::kIgnoreOutsidePaths ? 0
                                                            : reach(c, local);
    }
    const auto masks = table_->parent_sets(v);
    const auto scores = table_->log_scores(v);
    std::vector<double>& g = log_g_[i];
    std::vector<std::uint64_t>& q_of = q_of_[i];
    g.assign(sets, kNegInf);  // first the largest term of each Q: the common shift
    q_of.resize(masks.size());
    for (std::size_t k = 0; k < masks.size(); ++k) {
      std::uint64_t q = 0;
      for (ParentMask pm = masks[k]; pm; pm &= pm - 1) q |= adds[std::countr_zero(pm)];
      if ((q >> i) & 1U) {
        q_of[k] = kInvalid;  // a parent outside the block that v reaches: a cycle
        continue;
      }
      q_of[k] = q;
      g[q] = std::max(g[q], scores[k]);
    }
    std::fill(acc.begin(), acc.end(), 0.0L);
    for (std::size_t k = 0; k < masks.size(); ++k)
      if (q_of[k] != kInvalid)
        acc[q_of[k]] += std::exp(static_cast<long double>(scores[k] - g[q_of[k]]));
    for (std::size_t q = 0; q < sets; ++q)
      if (acc[q] > 0) g[q] += static_cast<double>(std::log(acc[q]));
  }
  // A test's broken variant never takes the cached path (it must show its own errors).
  whole_ready_ = m == n_ && fault_ == BlockFault::kNone;
  whole_engine_.reset();
}

double BlockMove::log_normaliser() const {
  return ExactEngine(log_g_, block_engine_options(false)).log_total_weight();
}

void BlockMove::draw(Rng& rng, std::vector<ParentMask>& next) const {
  Dag h;
  if (whole_ready_) {
    if (!whole_engine_)
      whole_engine_ = std::make_unique<ExactEngine>(log_g_, block_engine_options(true));
    h = whole_engine_->draw(rng);
  } else {
    h = ExactEngine(log_g_, block_engine_options(true)).draw(rng);
  }
  const int m = static_cast<int>(log_g_.size());
  next.resize(m);
  for (int i = 0; i < m; ++i) {
    // P among the valid sets with Q(P) = H_v, with probability f_v(P) / g_v(H_v).
    const std::uint64_t target_q = h.parent_mask(i);
    const std::vector<std::uint64_t>& q_of = q_of_[i];
    const bool uniform = fault_ == BlockFault::kUniformWithinBlockParentSet;
    const double norm = log_g_[i][target_q];
    // The sets of node i: the table row of the block's i-th node.
    const auto masks = table_->parent_sets(nodes_[i]);
    const auto scores = table_->log_scores(nodes_[i]);
    long double total = 0;
    for (std::size_t k = 0; k < masks.size(); ++k)
      if (q_of[k] == target_q)
        total += uniform ? 1.0L : std::exp(static_cast<long double>(scores[k] - norm));
    const long double u = static_cast<long double>(uniform01(rng)) * total;
    long double run = 0;
    ParentMask pick = 0;
    bool found = false;
    for (std::size_t k = 0; k < masks.size(); ++k) {
      if (q_of[k] != target_q) continue;
      pick = masks[k];
      found = true;
      run += uniform ? 1.0L : std::exp(static_cast<long double>(scores[k] - norm));
      if (run > u) break;
    }
    if (!found) throw Error("block move: no parent set for the drawn block graph");
    next[i] = pick;
  }
}

std::unique_ptr<BlockMove> make_block_move(const ScoreTable& table, const ChainConfig& config,
                                           BlockFault fault) {
  return std::make_unique<BlockMove>(table, config, fault);
}

// ---- The chain's step ----------------------------------------------------------------------

bool StructureChain::block_move(Rng& rng) {
  const std::vector<int> block = block_->draw_block(rng);
  const bool accepted = block_move_on(block, rng);
  // Over all nodes the draw is exact from the whole posterior (restricted: accepted exactly in
  // the class, with a probability that does not depend on the state): a regeneration.
  return accepted && int(block.size()) == n_ && block_fault_of(faults_.get()) == BlockFault::kNone;
}

bool StructureChain::block_move_on(std::span<const int> block, Rng& rng) {
  if (!block_) block_ = make_block_move(*table_, config_, block_fault_of(faults_.get()));
  ++counts_.proposed[int(Move::kBlock)];
  block_->derive(local_, block);
  std::vector<ParentMask> next;
  block_->draw(rng, next);
  const int m = static_cast<int>(block.size());
  if (config_.restriction) {
    // The proposal is the exact conditional of the unrestricted target: the Hastings ratio
    // under a restriction is 1[G' in D_k'].
    Dag proposed = dag_;
    for (int i = 0; i < m; ++i) set_local_parents(*table_, proposed, block[i], next[i]);
    if (!in_restriction(proposed)) return false;
  }
  for (int i = 0; i < m; ++i) {
    const int v = block[i];
    num_edges_ += std::popcount(next[i]);
    num_edges_ -= std::popcount(local_[v]);
    local_[v] = next[i];
    score_[v] = table_->log_score(v, next[i]);
    if (track_dag_) set_local_parents(*table_, dag_, v, next[i]);
  }
  rebuild_ancestors();
  ++counts_.accepted[int(Move::kBlock)];
  return true;
}

double StructureChain::block_log_normaliser(std::span<const int> block) {
  if (!block_) block_ = make_block_move(*table_, config_, block_fault_of(faults_.get()));
  block_->derive(local_, block);
  return block_->log_normaliser();
}

}  // namespace covey
