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
  if (total > (std::size_t{1} << 27)) return;  // 1.3 GB of slots: not worth it
  screen_.assign(total, kMissing);
  exact_.assign(total, -INFINITY);
  scale_.assign(n, NodeScale{});
  for (int v = 0; v < n; ++v) {
    const auto masks = table.parent_sets(v);
    const auto scores = table.log_scores(v);
    const double top = *std::max_element(scores.begin(), scores.end());
    double range = 0;
    for (double s : scores) {
      if (!(s - top > -1e30)) return;  // no finite range: no screening
      range = std::max(range, top - s);
    }
    NodeScale& scale = scale_[v];
    scale.top = top;
    if (range / kLevels > 0) scale.step = range / kLevels;  // else 1: every level is 0
    for (std::size_t k = 0; k < masks.size(); ++k) {
      const std::size_t at = index(v, masks[k]);
      const double level = std::round((scores[k] - top) / scale.step);
      screen_[at] = static_cast<std::int16_t>(std::clamp(level, double(-kLevels), 0.0));
      exact_[at] = scores[k];
    }
    // A level is within step / 2 of (s - max_v) / step (round to nearest; the division and the
    // product level * step add relative errors near 2^-53). The term's other double roundings
    // (s, the current score and max_v of magnitude up to |max_v| + range, a few operations) are
    // below 2^-50 (|max_v| + range). Plus slack.
    scale.margin = scale.step * 0.5 * 1.001 + std::ldexp(std::abs(top) + range, -48) + 1e-12;
  }
  usable_ = true;
}

void ScreenScores::toggle_base(int v, ParentMask set, ToggleBase& out) const {
  static_assert(std::size(ToggleBase{}.add) == kMaxSize + 1 &&
                std::size(ToggleBase{}.remove) == kMaxSize);
  // The rank of a set is the sum of C(s, i) over its elements s in increasing order, i the
  // 1-based position. Toggling b with j elements of S below it keeps those at their position;
  // the elements above b move up one position when b is added (b itself at j + 1) and down one
  // when it is removed.
  int elements[kMaxSize];
  int size = 0;
  for (ParentMask m = set; m; m &= m - 1) elements[size++] = std::countr_zero(m);
  const std::size_t* offset = &offset_[std::size_t(v) * (kMaxSize + 2)];
  out.set = set;
  for (int j = 0; j < size; ++j) {  // remove the element at position j + 1
    std::uint64_t rank = 0;
    for (int i = 0; i < j; ++i) rank += binomial_[elements[i]][i + 1];
    for (int i = j + 1; i < size; ++i) rank += binomial_[elements[i]][i];
    out.remove[j] = static_cast<std::uint32_t>(offset[size - 1] + rank);
  }
  if (size >= max_size_) {
    out.add[0] = ToggleBase::kNoAdd;
    return;
  }
  for (int j = 0; j <= size; ++j) {  // add below the element at position j + 1
    std::uint64_t rank = 0;
    for (int i = 0; i < j; ++i) rank += binomial_[elements[i]][i + 1];
    for (int i = j; i < size; ++i) rank += binomial_[elements[i]][i + 2];
    out.add[j] = static_cast<std::uint32_t>(offset[size + 1] + rank);
  }
}

}  // namespace covey
