#pragma once
// Intervals for a binomial proportion (a share of draws inside a class, an acceptance rate).
#include <cmath>
#include <cstdint>

namespace covey {

struct ProportionInterval {
  double lo = 0, hi = 1;
};

// The Wilson score interval for `successes` out of `trials` (common practice; R's
// prop.test(correct = FALSE) reports the same interval). z = 1.96: 95%. trials = 0 gives [0, 1].
inline ProportionInterval wilson_interval(std::uint64_t successes, std::uint64_t trials,
                                          double z = 1.959963984540054) {
  if (trials == 0) return {0.0, 1.0};
  const double n = static_cast<double>(trials);
  const double p = static_cast<double>(successes) / n;
  const double z2 = z * z;
  const double denom = 1 + z2 / n;
  const double center = (p + z2 / (2 * n)) / denom;
  const double half = z * std::sqrt(p * (1 - p) / n + z2 / (4 * n * n)) / denom;
  return {std::fmax(0.0, center - half), std::fmin(1.0, center + half)};
}

}  // namespace covey
