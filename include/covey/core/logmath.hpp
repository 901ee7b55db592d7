#pragma once
// Log-space arithmetic shared by every engine: sums of weights are taken with a common scale
// and long-double accumulation (docs/mathematics.md section 1).
#include <cmath>
#include <limits>
#include <span>

namespace covey {

inline constexpr double kNegInf = -std::numeric_limits<double>::infinity();

// log(exp(a) + exp(b)) without overflow; either argument may be -inf.
inline double log_add(double a, double b) {
  if (a == kNegInf) return b;
  if (b == kNegInf) return a;
  if (a < b) std::swap(a, b);
  return a + std::log1p(std::exp(b - a));
}

// log(sum exp(x_i)) with the maximum as common scale and long-double accumulation.
inline double log_sum_exp(std::span<const double> xs) {
  double top = kNegInf;
  for (double x : xs) top = x > top ? x : top;
  if (top == kNegInf) return kNegInf;
  long double acc = 0.0L;
  for (double x : xs) acc += std::exp(static_cast<long double>(x - top));
  return top + static_cast<double>(std::log(acc));
}

// Streaming log-sum-exp: rescales the long-double accumulator when a larger term arrives.
class LogSumAccumulator {
 public:
  void add(double x) {
    if (x == kNegInf) return;
    if (x > scale_) {
      acc_ = acc_ * std::exp(static_cast<long double>(scale_ - x)) + 1.0L;
      scale_ = x;
    } else {
      acc_ += std::exp(static_cast<long double>(x - scale_));
    }
  }
  void add(const LogSumAccumulator& other) {
    if (other.scale_ == kNegInf) return;
    add_scaled(other.scale_, other.acc_);
  }
  double value() const {
    return scale_ == kNegInf ? kNegInf : scale_ + static_cast<double>(std::log(acc_));
  }

 private:
  void add_scaled(double scale, long double acc) {
    if (scale > scale_) {
      acc_ = acc_ * std::exp(static_cast<long double>(scale_ - scale)) + acc;
      scale_ = scale;
    } else {
      acc_ += acc * std::exp(static_cast<long double>(scale - scale_));
    }
  }
  double scale_ = kNegInf;
  long double acc_ = 0.0L;
};

}  // namespace covey
