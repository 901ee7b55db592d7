#pragma once
// Local scores from data: s_v(S) = log marginal likelihood of v's column given the parent set S,
// plus the log of a modular structure-prior factor (docs/mathematics.md section 1).
//
//  * BDeu for discrete data (Heckerman, Geiger & Chickering 1995) with equivalent sample size a:
//      sum over observed parent configurations j of
//        lgamma(a/q) - lgamma(a/q + N_j) + sum_k [lgamma(a/(q r) + N_jk) - lgamma(a/(q r))],
//    q = number of parent configurations, r = levels of v.
//  * BGe for Gaussian data (Geiger & Heckerman 2002, with the correction of Kuipers, Moffa &
//    Heckerman 2014): Normal-Wishart prior with mean = sample mean, alpha_mu, alpha_w > n+1 and
//    T = t I, t = alpha_mu (alpha_w - n - 1) / (alpha_mu + 1); see src/scores/bge.cpp for the
//    formula.
//
// Both are score equivalent: Markov-equivalent DAGs get equal totals under the uniform prior.
#include <cstdint>
#include <functional>
#include <limits>
#include <memory>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "covey/data/data.hpp"
#include "covey/data/edge_constraints.hpp"
#include "covey/scores/score_table.hpp"

namespace covey {

// A local marginal likelihood over one data table (no structure prior).
class LocalScore {
 public:
  virtual ~LocalScore() = default;
  virtual int num_variables() const = 0;
  // log p(x_v | x_parents); `parents` distinct variables other than v, in any order.
  virtual double log_marginal(int v, std::span<const int> parents) const = 0;

  // A family of parent sets of one node v, scored together so that work is shared:
  // every S = required + T with T a subset of `optional`, |T| <= max_optional, and either T empty
  // (first_optional = -1) or T's lowest member optional[first_optional]. Appends (bit i of the
  // mask = optional[i] is in T, log_marginal) pairs to `out`, in an order fixed by the request.
  struct Family {
    int node;
    std::span<const int> required;
    std::span<const int> optional;
    int max_optional;
    int first_optional;
  };
  virtual void score_family(const Family& family,
                            std::vector<std::pair<ParentMask, double>>& out) const;
};

std::unique_ptr<LocalScore> make_bdeu(const DataTable& data, double equivalent_sample_size);
// BDeu counts joint configurations in flat arrays of at most this many cells per thread (larger
// spaces are relabelled or sorted); part of the memory estimate.
inline std::uint64_t bdeu_count_cells(std::size_t rows) {
  const std::uint64_t cells = 4 * static_cast<std::uint64_t>(rows);
  return cells < (1u << 12) ? (1u << 12) : cells > (1u << 22) ? (1u << 22) : cells;
}

struct BgeParameters {
  double alpha_mu = 1.0;
  double alpha_w = std::numeric_limits<double>::quiet_NaN();  // NaN: n + 2
  // Scale every column to mean 0 and standard deviation 1 first (the default): with the default
  // prior T = t I, BGe is not invariant to units, so raw units would make the network depend on
  // whether a column is in ppb or ppm (docs/mathematics.md, "BGe and units").
  bool standardize = true;
};
std::unique_ptr<LocalScore> make_bge(const DataTable& data, const BgeParameters& parameters);
// The conditional-Gaussian score of a mixed table (DataTable::is_mixed): discrete nodes by BDeu
// (equivalent sample size `ess`) over the discrete columns; a Gaussian node by the sum, over the
// observed configurations of its discrete parents, of the BGe local score given its Gaussian
// parents on those rows (prior of the Gaussian columns alone: n = their number; columns
// standardized over all rows unless parameters.standardize is false). Gaussian parents of
// discrete nodes are not defined: see with_discrete_before_gaussian.
std::unique_ptr<LocalScore> make_conditional_gaussian(const DataTable& data, double ess,
                                                      const BgeParameters& parameters);
// The constraints plus every Gaussian -> discrete edge forbidden (background knowledge of the
// conditional-Gaussian score); throws InputError when such an edge is required.
EdgeConstraints with_discrete_before_gaussian(EdgeConstraints constraints,
                                              const std::vector<Variable>& variables);

// The alpha_w and t a BGe score uses for n variables (resolving the default); throws InputError
// unless alpha_mu > 0 and alpha_w > n + 1.
double bge_alpha_w(const BgeParameters& parameters, int n);
double bge_t(const BgeParameters& parameters, int n);

// Modular structure priors, folded into s_v as log factors of |S|:
//  uniform:       0;
//  edge-penalty:  -edge_penalty * |S|  (each edge has prior log-odds -edge_penalty);
//  parent-count:  -log C(n-1, |S|)     (Friedman & Koller 2003: uniform over sizes, then sets).
enum class PriorKind { kUniform, kEdgePenalty, kParentCount };
const char* to_string(PriorKind kind);
PriorKind prior_kind_from_string(const std::string& text);  // throws InputError
double log_structure_prior(PriorKind kind, double edge_penalty, int num_variables, int num_parents);

// Candidate-parent default: no restriction for n <= 20 variables, else the 20 best.
inline constexpr int kDefaultCandidates = -1;
inline constexpr int kDefaultCandidateCount = 20;
inline constexpr int kNoScreenUpTo = 20;

struct ScoreOptions {
  double equivalent_sample_size = 1.0;  // BDeu
  BgeParameters bge;                    // BGe
  PriorKind prior = PriorKind::kUniform;
  double edge_penalty = 1.0;
  int max_indegree = 3;
  // Each node's candidate parents: the `candidates` best by the pairwise screen
  // s_v({u}) - s_v({}) (ties: lower index first), plus its required parents.
  int candidates = kDefaultCandidates;
  EdgeConstraints constraints;
  std::uint64_t memory_limit = 0;  // 0: default_memory_limit()
  // Called with (parent sets done, total) from any thread, never two calls at once.
  std::function<void(std::size_t, std::size_t)> progress;
};

// The candidate parents of every node after forbidden edges, required edges and the screen.
std::vector<std::vector<int>> choose_candidates(const LocalScore& score,
                                                const std::vector<Variable>& variables,
                                                const ScoreOptions& options);

// Number of parent sets and the estimated peak bytes of scoring with these options (checked
// against the memory limit before anything large is allocated).
struct ScoreEstimate {
  double parent_sets = 0;
  double bytes = 0;
};
ScoreEstimate estimate_scoring(const std::vector<Variable>& variables, std::size_t rows,
                               const ScoreOptions& options);

// Scores every allowed parent set of every node in parallel (TBB). The table is bit-identical for
// any number of threads. Throws ResourceError when the estimate exceeds the memory limit.
ScoreTable compute_scores(const LocalScore& score, const std::vector<Variable>& variables,
                          std::size_t rows, const ScoreOptions& options, ScoreMetadata metadata);

// The whole step from data: BDeu for discrete tables, BGe for Gaussian ones, metadata filled
// (score, parameters, prior, max in-degree, rows, source, version, and "column:NAME" = what each
// column became on reading; command line left to callers).
ScoreTable score_data(const DataTable& data, const ScoreOptions& options);

// Which of the score's parameters a caller set explicitly (rather than left at the default).
struct ScoreParametersGiven {
  bool equivalent_sample_size = false, bge_alpha_mu = false, bge_alpha_w = false, raw_units = false,
       edge_penalty = false;
};
// Refuses parameters that the data or the prior cannot use, by field name (OptionError): BGe's
// parameters and raw units on purely discrete data, the BDeu sample size on purely Gaussian
// data, an edge penalty with another prior. Mixed tables use both scores and accept both.
void check_score_parameters(const ScoreParametersGiven& given, const ScoreOptions& options,
                            const DataTable& data, const std::string& data_name);

}  // namespace covey
