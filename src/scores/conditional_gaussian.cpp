// The conditional-Gaussian score of mixed tables (docs/mathematics.md, "Mixed tables"): discrete
// nodes by BDeu over the discrete columns (their parents are discrete: a Gaussian column is never
// a parent of a discrete one); a Gaussian node v with discrete parents D and Gaussian parents C by
// the sum over the observed configurations j of D of the BGe local score of v given C on the rows
// of j, each with its own prior mean (the rows' mean) and the prior of the Gaussian columns
// (n = their number, alpha_w, t as for BGe).
#include <Eigen/Cholesky>
#include <Eigen/Dense>
#include <algorithm>
#include <unordered_map>

#include "bge_internal.hpp"
#include "covey/core/error.hpp"
#include "covey/scores/scores.hpp"

namespace covey {
namespace {

class ConditionalGaussian final : public LocalScore {
 public:
  ConditionalGaussian(const DataTable& data, double ess, const BgeParameters& p)
      : n_(data.num_variables()), rows_(data.num_rows()), position_(n_, -1) {
    if (!data.is_mixed())
      throw InputError("the conditional-Gaussian score needs a mixed table (both kinds)");
    std::vector<Variable> discrete_variables;
    std::vector<std::vector<std::uint16_t>> discrete_codes;
    for (int v = 0; v < n_; ++v) {
      const Variable& var = data.variables()[v];
      if (var.kind == VariableKind::kDiscrete) {
        position_[v] = static_cast<int>(discrete_variables.size());
        discrete_variables.push_back(var);
        discrete_codes.emplace_back(data.codes(v).begin(), data.codes(v).end());
        codes_.push_back(data.codes(v).data());
        levels_.push_back(data.num_levels(v));
      } else {
        position_[v] = static_cast<int>(values_.size());
        double mean = 0, scale = 1;
        bge_detail::center_and_scale(data.values(v), p.standardize, var.name, mean, scale);
        std::vector<double> column(data.values(v).begin(), data.values(v).end());
        for (double& x : column) x = (x - mean) * scale;
        values_.push_back(std::move(column));
      }
    }
    discrete_ = DataTable::discrete(std::move(discrete_variables), std::move(discrete_codes));
    bdeu_ = make_bdeu(discrete_, ess);
    const int gaussian = static_cast<int>(values_.size());
    alpha_mu_ = p.alpha_mu;
    a_ = bge_alpha_w(p, gaussian) - gaussian;
    t_ = bge_t(p, gaussian);
    is_discrete_.resize(n_);
    for (int v = 0; v < n_; ++v)
      is_discrete_[v] = data.variables()[v].kind == VariableKind::kDiscrete;
  }

  int num_variables() const override { return n_; }

  double log_marginal(int v, std::span<const int> parents) const override {
    std::vector<int> discrete, gaussian;
    for (int u : parents) (is_discrete_[u] ? discrete : gaussian).push_back(position_[u]);
    if (is_discrete_[v]) {
      if (!gaussian.empty())
        throw Error("conditional-Gaussian score: a Gaussian parent of a discrete node");
      return bdeu_->log_marginal(position_[v], discrete);
    }
    gaussian.push_back(position_[v]);  // Y = C + v, v last
    std::vector<std::size_t> group;
    const std::size_t groups = group_rows(discrete, group);
    return sum_over_groups(gaussian, group, groups);
  }

 private:
  // Dense group ids of the rows by their configuration of the discrete columns `discrete`
  // (positions among the discrete columns); returns the number of groups.
  std::size_t group_rows(const std::vector<int>& discrete, std::vector<std::size_t>& group) const {
    group.assign(rows_, 0);
    if (discrete.empty()) return 1;
    std::unordered_map<std::uint64_t, std::size_t> ids;
    for (std::size_t i = 0; i < rows_; ++i) {
      std::uint64_t key = 0;
      for (int d : discrete) key = key * levels_[d] + codes_[d][i];
      group[i] = ids.emplace(key, ids.size()).first->second;
    }
    return ids.size();
  }

  // Sum over the groups of the BGe local score of the last column of `y` given the others.
  double sum_over_groups(const std::vector<int>& y, const std::vector<std::size_t>& group,
                         std::size_t groups) const {
    const int m = static_cast<int>(y.size()), l = m - 1;
    std::vector<double> count(groups, 0);
    Eigen::MatrixXd mean = Eigen::MatrixXd::Zero(groups, m);
    for (std::size_t i = 0; i < rows_; ++i) {
      count[group[i]] += 1;
      for (int k = 0; k < m; ++k) mean(group[i], k) += values_[y[k]][i];
    }
    for (std::size_t g = 0; g < groups; ++g) mean.row(g) /= count[g];
    std::vector<Eigen::MatrixXd> r(groups, t_ * Eigen::MatrixXd::Identity(m, m));
    Eigen::VectorXd x(m);
    for (std::size_t i = 0; i < rows_; ++i) {
      for (int k = 0; k < m; ++k) x(k) = values_[y[k]][i] - mean(group[i], k);
      r[group[i]].noalias() += x * x.transpose();
    }
    double total = 0;
    for (std::size_t g = 0; g < groups; ++g) {
      const Eigen::LLT<Eigen::MatrixXd> llt(r[g]);
      if (llt.info() != Eigen::Success)
        throw Error("conditional-Gaussian score: the scale matrix is not positive definite");
      double log_det_s = 0;
      for (int i = 0; i < l; ++i) log_det_s += 2 * std::log(llt.matrixLLT()(i, i));
      const double log_det_y = log_det_s + 2 * std::log(llt.matrixLLT()(l, l));
      const double constant = bge_detail::local_constant(count[g], l, a_, t_, alpha_mu_);
      total += bge_detail::local_score(constant, count[g], l, a_, log_det_s, log_det_y);
    }
    return total;
  }

  int n_;
  std::size_t rows_;
  std::vector<int> position_;  // index among the discrete or among the Gaussian columns
  std::vector<char> is_discrete_;
  DataTable discrete_;
  std::unique_ptr<LocalScore> bdeu_;
  std::vector<const std::uint16_t*> codes_;
  std::vector<int> levels_;
  std::vector<std::vector<double>> values_;  // Gaussian columns, centred and scaled
  double alpha_mu_ = 1, a_ = 0, t_ = 0;
};

}  // namespace

std::unique_ptr<LocalScore> make_conditional_gaussian(const DataTable& data, double ess,
                                                      const BgeParameters& parameters) {
  return std::make_unique<ConditionalGaussian>(data, ess, parameters);
}

EdgeConstraints with_discrete_before_gaussian(EdgeConstraints constraints,
                                              const std::vector<Variable>& variables) {
  const int n = static_cast<int>(variables.size());
  for (const Edge& e : constraints.required)
    if (variables[e.from].kind == VariableKind::kGaussian &&
        variables[e.to].kind == VariableKind::kDiscrete)
      throw InputError(e.origin + ": required edge '" + variables[e.from].name + "' -> '" +
                       variables[e.to].name +
                       "' makes a Gaussian column a parent of a discrete one, which the "
                       "conditional-Gaussian score does not allow");
  for (int u = 0; u < n; ++u)
    for (int v = 0; v < n; ++v)
      if (variables[u].kind == VariableKind::kGaussian &&
          variables[v].kind == VariableKind::kDiscrete)
        constraints.forbidden.push_back({u, v, "the conditional-Gaussian score"});
  return constraints;
}

}  // namespace covey
