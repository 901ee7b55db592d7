#pragma once
// The result of `covey check`: convergence diagnostics of MCMC draws (split R-hat, bulk and
// tail ESS, MCSE) for every feature of chain runs or every quantity of a draws CSV, ordered
// worst first, each with its status, and the verdict against thresholds. Commands print it;
// the rule itself (assess, judge, worst_first) is the diagnostics layer's.
#include <cstddef>
#include <string>
#include <vector>

#include "covey/chains/chain_runner.hpp"
#include "covey/diagnostics/diagnostics.hpp"
#include "covey/graph/features.hpp"

namespace covey {

// What one checked series is.
struct CheckedItem {
  std::string kind;          // "quantity" (draws CSV) or a feature kind ("edge", ..., "score")
  std::string name;          // the quantity's column name (draws CSV); empty for features
  std::string from, to;      // variable names of an edge, adjacency or ancestor; else empty
  std::string mean_key;      // "probability" for the 0/1 features, "mean" otherwise
  std::string display_name;  // e.g. "A → B" (feature_label) or the quantity's name
};

struct CheckResult {
  std::string source;  // the files, comma-separated
  int chains = 0;
  int iterations = 0;                     // draws per chain
  std::string plural = "features";        // "features" or "quantities", for messages
  std::vector<CheckedItem> items;         // input order
  std::vector<FeatureSummary> summaries;  // one per item
  std::vector<FeatureStatus> status;      // one per item, against `thresholds`
  std::vector<double> regenerative_se;    // empty, or one per item (NaN: not available)
  std::size_t regenerations = 0, tours = 0;
  Thresholds thresholds;
  std::vector<std::size_t> worst_first;  // item indices, worst first (diagnostics' worst_first)
  Verdict verdict;
  VerdictContext context;  // chains, draws, probabilities with an unreliable MCSE
};

// The verdict in the one wording of covey (diagnostics.hpp's verdict_text).
VerdictText verdict_text(const CheckResult& result);
// The stopping rule's verdict of `covey chain` (edge features of the run, judged with
// until_rhat / until_ess or the defaults of Thresholds: stopping_thresholds) in the same
// wording, per-measure counts included.
VerdictText stopping_verdict_text(const ChainRunSummary& summary);

// Throws OptionError ("<context>: {max_rhat} must exceed 1, ...") unless max_rhat > 1.
void check_thresholds(const Thresholds& thresholds, const std::string& context = "check");
// Chain-run files taken together (their chains side by side), features of `kinds`; a progress
// line on a terminal. InputError naming a file that is not a run or does not fit the others.
CheckResult check_chain_runs(const std::vector<std::string>& files, const FeatureKinds& kinds,
                             const Thresholds& thresholds);
// One CSV of draws (draws_csv.hpp): every named quantity.
CheckResult check_draws_csv(const std::string& path, const Thresholds& thresholds);

}  // namespace covey
