// BGe local scores (Geiger & Heckerman 2002, with the correction of Kuipers, Moffa & Heckerman
// 2014), in the 2014 paper's parametrization.
//
// Prior: Normal-Wishart on (mu, W) over all n variables: W ~ Wishart(alpha_w, T^-1) (density
// proportional to |W|^((alpha_w-n-1)/2) exp(-tr(T W)/2)), mu | W ~ N(nu, (alpha_mu W)^-1), with
// nu = the sample mean and T = t I, t = alpha_mu (alpha_w - n - 1) / (alpha_mu + 1).
// Posterior scale: R = T + S_N + (N alpha_mu / (N + alpha_mu)) (nu - xbar)(nu - xbar)^T, where the
// last term vanishes because nu = xbar.
//
// The marginal of a subset Y (|Y| = p) is Normal-Wishart with alpha_w - n + p degrees of freedom
// and scale T_YY, so p(D_Y) = pi^(-Np/2) (alpha_mu/(N+alpha_mu))^(p/2) Gamma_p((N+a)/2) /
// Gamma_p(a/2) |T_YY|^(a/2) |R_YY|^(-(N+a)/2) with a = alpha_w - n + p. The local score is log
// p(D_{S+v}) - log p(D_S); with l = |S| the multivariate gammas reduce to one gamma ratio:
//   s_v(S) = 1/2 log(alpha_mu/(N+alpha_mu)) - N/2 log(pi)
//          + lgamma((N+alpha_w-n+l+1)/2) - lgamma((alpha_w-n+l+1)/2)
//          + (alpha_w-n+2l+1)/2 log(t)
//          + (N+alpha_w-n+l)/2 log|R_SS| - (N+alpha_w-n+l+1)/2 log|R_{S+v,S+v}|.
#include <math.h>  // lgamma_r

#include <Eigen/Cholesky>
#include <Eigen/Dense>
#include <cmath>
#include <numbers>

#include "bge_internal.hpp"
#include "covey/core/error.hpp"
#include "covey/scores/scores.hpp"

namespace covey {

double bge_alpha_w(const BgeParameters& p, int n) {
  const double alpha_w = std::isnan(p.alpha_w) ? n + 2.0 : p.alpha_w;
  if (!(p.alpha_mu > 0) || !std::isfinite(p.alpha_mu))
    throw OptionError("{bge.alpha_mu} must be a positive number");
  if (!(alpha_w > n + 1.0) || !std::isfinite(alpha_w))
    throw OptionError("{bge.alpha_w} must exceed n + 1 = " + std::to_string(n + 1) +
                      " (n = number of variables)");
  return alpha_w;
}

double bge_t(const BgeParameters& p, int n) {
  const double alpha_w = bge_alpha_w(p, n);
  return p.alpha_mu * (alpha_w - n - 1) / (p.alpha_mu + 1);
}

namespace {

class Bge final : public LocalScore {
 public:
  Bge(const DataTable& data, const BgeParameters& p) : n_(data.num_variables()) {
    if (data.kind() != VariableKind::kGaussian || data.is_mixed())
      throw InputError("BGe needs Gaussian data (the table holds discrete columns)");
    const double alpha_w = bge_alpha_w(p, n_);
    const double t = bge_t(p, n_);
    const double rows = static_cast<double>(data.num_rows());
    build_scale_matrix(data, p.standardize, t);
    // Terms that depend on l = |S| only.
    const double a = alpha_w - n_;
    constant_.resize(n_);
    det_s_.resize(n_);
    det_y_.resize(n_);
    for (int l = 0; l < n_; ++l) {
      constant_[l] = bge_detail::local_constant(rows, l, a, t, p.alpha_mu);
      det_s_[l] = 0.5 * (rows + a + l);
      det_y_[l] = 0.5 * (rows + a + l + 1);
    }
  }

  int num_variables() const override { return n_; }

  double log_marginal(int v, std::span<const int> parents) const override {
    const int l = static_cast<int>(parents.size());
    // Cholesky of R over (parents..., v): the first l pivots give |R_SS|, all give |R_YY|.
    Eigen::MatrixXd m(l + 1, l + 1);
    for (int i = 0; i <= l; ++i) {
      const int a = i < l ? parents[i] : v;
      for (int j = 0; j <= i; ++j) m(i, j) = r_(a, j < l ? parents[j] : v);
    }
    const Eigen::LLT<Eigen::MatrixXd> llt(m);
    if (llt.info() != Eigen::Success)
      throw Error("BGe: the scale matrix is not positive definite (numerical breakdown)");
    const auto& lower = llt.matrixLLT();
    double log_det_s = 0;
    for (int i = 0; i < l; ++i) log_det_s += 2 * std::log(lower(i, i));
    const double log_det_y = log_det_s + 2 * std::log(lower(l, l));
    return constant_[l] + det_s_[l] * log_det_s - det_y_[l] * log_det_y;
  }

 private:
  // R = t I + sum_i (x_i - xbar)(x_i - xbar)^T, accumulated over blocks of rows (fixed blocks in a
  // fixed order: the result does not depend on threads).
  void build_scale_matrix(const DataTable& data, bool standardize, double t) {
    const std::size_t rows = data.num_rows();
    std::vector<double> mean(n_), scale(n_, 1.0);
    for (int v = 0; v < n_; ++v)
      bge_detail::center_and_scale(data.values(v), standardize, data.name(v), mean[v], scale[v]);
    constexpr std::size_t kBlock = 2048;
    Eigen::MatrixXd sum = Eigen::MatrixXd::Zero(n_, n_);
    Eigen::MatrixXd block(kBlock, n_);
    for (std::size_t first = 0; first < rows; first += kBlock) {
      const std::size_t count = std::min(kBlock, rows - first);
      for (int v = 0; v < n_; ++v) {
        const double* x = data.values(v).data() + first;
        for (std::size_t i = 0; i < count; ++i) block(i, v) = (x[i] - mean[v]) * scale[v];
      }
      const auto b = block.topRows(count);
      sum.noalias() += b.transpose() * b;
    }
    r_ = sum;
    r_.diagonal().array() += t;
  }

  int n_;
  Eigen::MatrixXd r_;
  std::vector<double> constant_, det_s_, det_y_;
};

}  // namespace

std::unique_ptr<LocalScore> make_bge(const DataTable& data, const BgeParameters& parameters) {
  return std::make_unique<Bge>(data, parameters);
}

}  // namespace covey
