// Graph features of chain-run draws (include/covey/chains/chain_run_file.hpp, RunFeatures): edge,
// adjacency and ancestor indicators, the log score, membership in D_k, and the tours between
// teleport regenerations.
#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>

#include <inttypes.h>
#include <algorithm>
#include <bit>
#include <cstdio>

#include "covey/chains/chain_run_file.hpp"
#include "covey/core/error.hpp"
#include "covey/graph/cover_class.hpp"
#include "covey/graph/dag.hpp"

namespace covey {

RunFeatures::RunFeatures(const ChainRun& run, bool with_ancestors)
    : RunFeatures(std::vector<ChainRun>{run}, with_ancestors) {}

RunFeatures::RunFeatures(const std::vector<ChainRun>& runs, bool with_ancestors) {
  if (runs.empty()) throw Error("RunFeatures: no run given");
  const ChainRun& first = runs.front();
  n_ = first.num_variables();
  words_ = first.words_per_node();
  stride_ = std::size_t(n_) * words_;
  iterations_ = first.num_draws();
  std::size_t total_chains = 0;
  for (const ChainRun& run : runs) {
    if (run.variables() != first.variables() ||
        run.table_fingerprint() != first.table_fingerprint())
      throw InputError(run.path() + ": made from another score table than " + first.path() +
                       " (variables or table fingerprint differ)");
    iterations_ = std::min<std::size_t>(iterations_, run.num_draws());
    total_chains += std::size_t(run.num_chains());
  }
  total_ = total_chains * iterations_;
  columns_.assign(total_ * stride_, 0);
  log_scores_.reserve(total_);
  steps_.reserve(total_);
  for (const ChainRun& run : runs) append(run);
  if (with_ancestors) compute_ancestors();
}

void RunFeatures::append(const ChainRun& run) {
  for (int c = 0; c < run.num_chains(); ++c) {
    // Transposed into the node-major columns: draw t of this chain is row chains_ * iterations_ +
    // t.
    const auto rows = run.draws(c);
    const std::size_t first_row = std::size_t(chains_) * iterations_;
    for (std::size_t t = 0; t < iterations_; ++t)
      for (std::size_t w = 0; w < stride_; ++w)
        columns_[w * total_ + first_row + t] = rows[t * stride_ + w];
    const auto scores = run.log_scores(c);
    log_scores_.insert(log_scores_.end(), scores.begin(),
                       scores.begin() + std::ptrdiff_t(iterations_));
    // A tour starts at the first kept draw at or after a regeneration step: the state there is
    // a function of the exact draw and of later randomness only.
    const auto steps = run.draw_steps(c);
    const auto kept_end = steps.begin() + std::ptrdiff_t(iterations_);
    steps_.insert(steps_.end(), steps.begin(), kept_end);
    std::vector<std::size_t> starts;
    for (const std::int64_t r : run.regenerations(c)) {
      const auto at = std::lower_bound(steps.begin(), kept_end, r);
      const auto position = static_cast<std::size_t>(at - steps.begin());
      if (starts.empty() || starts.back() != position) starts.push_back(position);
      ++regenerations_;
    }
    tour_starts_.push_back(std::move(starts));
    ++chains_;
  }
}

// Ancestor sets by a fixed point per draw: anc(v) = pa(v) | union of anc(u) over u in anc(v).
// Sweeping the nodes repeatedly converges within the length of the longest path. Each draw is
// gathered from the columns into a row, closed, and scattered back.
void RunFeatures::compute_ancestors() {
  ancestors_.assign(columns_.size(), 0);
  tbb::parallel_for(tbb::blocked_range<std::size_t>(0, total_), [&](const auto& range) {
    std::vector<std::uint64_t> anc(stride_);
    std::vector<std::uint64_t> merged(static_cast<std::size_t>(words_));
    for (std::size_t r = range.begin(); r != range.end(); ++r) {
      for (std::size_t w = 0; w < stride_; ++w) anc[w] = columns_[w * total_ + r];
      for (bool changed = true; changed;) {
        changed = false;
        for (int v = 0; v < n_; ++v) {
          std::uint64_t* own = anc.data() + std::size_t(v) * words_;
          std::copy(own, own + words_, merged.begin());
          for (int w = 0; w < words_; ++w)
            for (std::uint64_t m = own[w]; m; m &= m - 1) {
              const int u = w * 64 + std::countr_zero(m);
              const std::uint64_t* theirs = anc.data() + std::size_t(u) * words_;
              for (int x = 0; x < words_; ++x) merged[std::size_t(x)] |= theirs[x];
            }
          if (!std::equal(merged.begin(), merged.end(), own)) {
            std::copy(merged.begin(), merged.end(), own);
            changed = true;
          }
        }
      }
      for (std::size_t w = 0; w < stride_; ++w) ancestors_[w * total_ + r] = anc[w];
    }
  });
}

std::vector<std::pair<int, int>> RunFeatures::edges_seen() const {
  std::vector<std::uint64_t> any(stride_, 0);
  for (std::size_t w = 0; w < stride_; ++w)
    for (std::size_t r = 0; r < total_; ++r) any[w] |= columns_[w * total_ + r];
  std::vector<std::pair<int, int>> out;
  for (int to = 0; to < n_; ++to)
    for (int w = 0; w < words_; ++w)
      for (std::uint64_t m = any[std::size_t(to) * words_ + w]; m; m &= m - 1)
        out.emplace_back(w * 64 + std::countr_zero(m), to);
  std::sort(out.begin(), out.end());
  return out;
}

namespace {
void check_output_size(std::span<double> out, std::size_t expected) {
  if (out.size() != expected) throw Error("RunFeatures: output size must be chains * draws");
}
}  // namespace

// Each indicator reads one column (the parent words of `to` holding `from`) from start to end.
void RunFeatures::edge(int from, int to, std::span<double> out) const {
  check_output_size(out, total_);
  const std::uint64_t* column = parent_column(columns_, from, to);
  const int bit = from & 63;
  for (std::size_t r = 0; r < total_; ++r) out[r] = static_cast<double>((column[r] >> bit) & 1U);
}

void RunFeatures::adjacency(int a, int b, std::span<double> out) const {
  check_output_size(out, total_);
  const std::uint64_t* ab = parent_column(columns_, a, b);
  const std::uint64_t* ba = parent_column(columns_, b, a);
  const int bit_a = a & 63, bit_b = b & 63;
  for (std::size_t r = 0; r < total_; ++r)
    out[r] = static_cast<double>(((ab[r] >> bit_a) | (ba[r] >> bit_b)) & 1U);
}

void RunFeatures::ancestor(int from, int to, std::span<double> out) const {
  if (ancestors_.empty() && !columns_.empty())
    throw Error("RunFeatures: built without ancestor sets");
  check_output_size(out, total_);
  const std::uint64_t* column = parent_column(ancestors_, from, to);
  const int bit = from & 63;
  for (std::size_t r = 0; r < total_; ++r) out[r] = static_cast<double>((column[r] >> bit) & 1U);
}

void RunFeatures::log_score(std::span<double> out) const {
  check_output_size(out, log_scores_.size());
  std::copy(log_scores_.begin(), log_scores_.end(), out.begin());
}

void RunFeatures::in_cover_class(int k, std::span<double> out) const {
  check_output_size(out, total_);
  tbb::parallel_for(tbb::blocked_range<std::size_t>(0, total_), [&](const auto& range) {
    Dag dag(n_);
    for (std::size_t r = range.begin(); r != range.end(); ++r) {
      for (int v = 0; v < n_; ++v) {
        const std::span<std::uint64_t> words = dag.parent_words(v);
        for (std::size_t w = 0; w < words.size(); ++w)
          words[w] = columns_[(std::size_t(v) * words.size() + w) * total_ + r];
      }
      out[r] = covey::in_cover_class(dag, k) ? 1.0 : 0.0;
    }
  });
}

}  // namespace covey
