#pragma once
// Pieces shared by the diagnostics sources: R's elementary statistics as posterior calls them.
#include <cmath>
#include <cstddef>
#include <limits>
#include <optional>
#include <span>
#include <vector>

#include "covey/diagnostics/diagnostics.hpp"

namespace covey::diagnostics_detail {

inline constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// posterior's should_return_NA: a non-finite value, or max - min below the double epsilon.
bool should_return_na(std::span<const double> values);

// True when all values are equal (exactly; posterior's zero-variance chains).
bool all_equal(std::span<const double> values);

// R's mean(): the sum divided by n, refined by the mean residual (R sums in long double; the
// difference is rounding). A constant sequence gets exactly its value, so its deviations are
// exactly zero.
double r_mean(std::span<const double> values);

// R's var() given the mean: sum of squared deviations over n - 1.
double r_variance(std::span<const double> values, double mean);

// R's mean(c(a, b)), as median() uses it for an even count.
double r_mean_of_two(double a, double b);

// R's quantile(x, prob, type = 7) from n and the order statistics: `sorted(k)` returns the k-th
// smallest value (1-based).
template <class SortedAt>
double r_quantile7(std::size_t n, double prob, SortedAt sorted) {
  const double index = 1 + static_cast<double>(n - 1) * prob;
  const auto lo = static_cast<std::size_t>(std::floor(index));
  const auto hi = static_cast<std::size_t>(std::ceil(index));
  double q = sorted(lo);
  if (index > static_cast<double>(lo)) {
    const double upper = sorted(hi);
    if (upper != q) {
      const double h = index - static_cast<double>(lo);
      q = (1 - h) * q + h * upper;
    }
  }
  return q;
}

// R's median() from n and the order statistics.
template <class SortedAt>
double r_median(std::size_t n, SortedAt sorted) {
  if (n % 2 == 1) return sorted((n + 1) / 2);
  return r_mean_of_two(sorted(n / 2), sorted(n / 2 + 1));
}

// Order statistics of arbitrary values by partial sorting; `values` is reordered.
double r_quantile7(std::vector<double>& values, double prob);
double r_median(std::vector<double>& values);

// Per-chain means and variances (R's mean() and var()).
struct ChainMoments {
  std::vector<double> mean;
  std::vector<double> var;
};
ChainMoments chain_moments(DrawsView draws);

// The two halves of rhat_unsplit and ess_unsplit after their checks for undefined input:
// R-hat from the chain moments, and the ESS given the chain means (iterations >= 3).
double rhat_from_moments(const ChainMoments& moments, int iterations);
double ess_given_means(DrawsView draws, const std::vector<double>& chain_means);
// The same ESS for chains of 0/1 values, from their runs of ones with exact lag sums: much
// cheaper than the FFT when the chains switch rarely (most edge features); nothing when the
// runs are too many for that to pay (then call ess_given_means).
std::optional<double> binary_ess_given_means(DrawsView draws,
                                             const std::vector<double>& chain_means);

// Steps of posterior's rhat, ess_quantile and ess_tail, shared by the single diagnostics and
// summarize().
Draws rank_normalized_split(DrawsView draws);        // z_scale(.split_chains(x))
double folded_rhat(DrawsView draws, double median);  // .rhat of z-scaled split |x - median|
double indicator_ess(DrawsView draws, double q);     // .ess of split I(x <= q)
double quantile_probability(double prob, std::size_t draws);  // checks prob, adjusts prob = 1
double max_or_nan(double a, double b);                        // R's max() and min(): NA wins
double min_or_nan(double a, double b);

}  // namespace covey::diagnostics_detail
