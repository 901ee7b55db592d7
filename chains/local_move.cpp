// The screening scores of the local moves (chains/move_kernels.hpp; docs/chains.md).
#include <algorithm>
#include <cmath>
#include <limits>

#include "move_kernels.hpp"

namespace covey {

ScreenScores::ScreenScores(const ScoreTable& table) {
  const int n = table.num_variables();
  max_size_ = table.max_parent_set_size();
  if (max_size_ > kMaxSize) return;
  for (int b = 0; b <= kMaxCandidates; ++b) {
    binomial_[b][0] = 1;
    for (int t = 1; t <= kMaxSize; ++t)
      binomial_[b][t] = b == 0 ? 0 : binomial_[b - 1][t - 1] + binomial_[b - 1][t];
  }
  offset_.assign(std::size_t(n) * (kMaxSize + 2), 0);
  std::size_t total = 0;
  for (int v = 0; v < n; ++v) {
    const int c = static_cast<int>(table.candidates(v).size());
    std::size_t* offset = &offset_[std::size_t(v) * (kMaxSize + 2)];
    for (int s = 0; s <= max_size_; ++s) {
      offset[s] = total;
      total += binomial_[c][s];
    }
    for (int s = max_size_ + 1; s < kMaxSize + 2; ++s) offset[s] = total;
    if (total - offset[0] > kMaxBlowup * table.num_parent_sets(v) + 64) return;
  }
  if (total > (std::size_t{1} << 27)) return;  // 512 MB of floats: not worth it
  screen_.assign(total, -INFINITY);
  exact_.assign(total, -INFINITY);
  margin_.assign(n, 0);
  for (int v = 0; v < n; ++v) {
    const auto masks = table.parent_sets(v);
    const auto scores = table.log_scores(v);
    const double top = *std::max_element(scores.begin(), scores.end());
    double range = 0;
    for (std::size_t k = 0; k < masks.size(); ++k) {
      const double x = scores[k] - top;
      if (!(x > -1e30)) return;  // beyond float's range: no screening
      range = std::max(range, -x);
      const std::size_t at = index(v, masks[k]);
      screen_[at] = static_cast<float>(x);
      exact_[at] = scores[k];
    }
    // Each float is within |x| 2^-24 of x (round to nearest), so a difference of two is within
    // 2^-23 range; the exact ratio's own double roundings (s and the current score of magnitude up
    // to |top| + range, a few operations) are below 2^-50 (|top| + range). Plus slack.
    margin_[v] = std::ldexp(range, -23) * 1.001 + std::ldexp(std::abs(top) + range, -48) + 1e-12;
  }
  usable_ = true;
}

}  // namespace covey
