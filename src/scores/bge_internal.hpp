#pragma once
// The BGe local score's closed form, shared by the BGe score (bge.cpp) and the
// conditional-Gaussian score (conditional_gaussian.cpp); docs/mathematics.md, "Scores".
#include <math.h>  // lgamma_r

#include <cmath>
#include <numbers>
#include <span>
#include <string>

#include "covey/core/error.hpp"

namespace covey::bge_detail {

// The part of s_v(S) that depends on |S| = l and the number of rows only:
//   1/2 log(alpha_mu/(N+alpha_mu)) - N/2 log(pi) + lgamma((N+a+l+1)/2) - lgamma((a+l+1)/2)
//   + (a+2l+1)/2 log(t),  with a = alpha_w - n.
inline double local_constant(double rows, int l, double a, double t, double alpha_mu) {
  int sign;
  return 0.5 * std::log(alpha_mu / (rows + alpha_mu)) - 0.5 * rows * std::log(std::numbers::pi) +
         lgamma_r((rows + a + l + 1) / 2, &sign) - lgamma_r((a + l + 1) / 2, &sign) +
         0.5 * (a + 2 * l + 1) * std::log(t);
}

// s_v(S) from the constant and the log determinants of R over S and over S + v.
inline double local_score(double constant, double rows, int l, double a, double log_det_s,
                          double log_det_y) {
  return constant + 0.5 * (rows + a + l) * log_det_s - 0.5 * (rows + a + l + 1) * log_det_y;
}

// The mean of a column and the factor that standardizes it (1 / sample standard deviation, or
// 1 when not standardizing). Throws InputError for a column with no spread.
inline void center_and_scale(std::span<const double> column, bool standardize,
                             const std::string& name, double& mean, double& scale) {
  const std::size_t rows = column.size();
  long double sum = 0;
  for (double x : column) sum += x;
  mean = static_cast<double>(sum / rows);
  scale = 1.0;
  if (!standardize) return;
  long double ss = 0;
  for (double x : column) ss += (x - mean) * (x - mean);
  const double sd = rows > 1 ? std::sqrt(static_cast<double>(ss / (rows - 1))) : 0.0;
  if (!(sd > 0))
    throw InputError("cannot standardize column '" + name +
                     "': it has no spread (constant or a single row)");
  scale = 1 / sd;
}

}  // namespace covey::bge_detail
