#pragma once
// covey's visual report: one folder holding index.html (self-contained: inline CSS, no network)
// and the figures it shows (PNG, with the SVG and the consensus DOT beside them). The page
// leads with the convergence verdict and a caution about reading structure as cause, then the
// run facts, trace plot, R-hat and ESS distributions, the worst features and their running
// probabilities by chain, the edge-probability
// heat map, the consensus DAG and, when given, the comparison of two posteriors edge by edge.
//
// ReportData is a plain in-memory model: whoever reads a run's files fills it. Undefined values
// (a diagnostic of a feature constant across all draws, a standard error not known) are NaN.
#include <cmath>
#include <cstdint>
#include <limits>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "covey/diagnostics/diagnostics.hpp"
#include "covey/graph/features.hpp"

namespace covey {

inline constexpr double kUndefined = std::numeric_limits<double>::quiet_NaN();

struct ReportFeature {
  FeatureKind kind = FeatureKind::kEdge;
  int from = -1, to = -1;  // variable indices (u -> v, u - v, u ~> v); -1 for the log score
  // Posterior mean of the feature's indicator; for kScore the posterior mean log score.
  double probability = kUndefined;
  double rhat = kUndefined;  // max of rank-normalised split and folded R-hat
  double ess_bulk = kUndefined, ess_tail = kUndefined;
  double mcse = kUndefined;  // Monte Carlo standard error of `probability`
};

struct ChainTrace {
  std::vector<std::int64_t> steps;  // step number of each kept draw
  std::vector<double> log_scores;   // log w(G) of each kept draw (same length)
};

// One feature's indicator as each chain saw it: its running mean (the probability estimated from
// that chain's draws up to each point). Chains settling on different values show a feature that
// has not mixed.
struct FeatureTrace {
  std::size_t feature = 0;  // index into ReportData::features
  struct Chain {
    std::vector<std::int64_t> steps;   // step number of each point
    std::vector<double> running_mean;  // same length
  };
  std::vector<Chain> chains;
};

struct ComparisonPair {
  int from = 0, to = 0;                         // the edge from -> to
  double a = kUndefined, b = kUndefined;        // its probability under posteriors A and B
  double se_a = kUndefined, se_b = kUndefined;  // standard errors; NaN: exact or not known
};

// Two estimates of the same edge probabilities, e.g. the restricted class D_k (exact) against
// the unrestricted chains.
struct Comparison {
  std::string title;  // the section heading, naming what is compared ("" : from the labels)
  std::string label_a, label_b;  // axis labels, e.g. "exact, cover-bounded class (k = 2)"
  std::vector<ComparisonPair> pairs;
};

struct MoveAcceptance {
  std::string move;  // e.g. "add", "delete", "reverse", "REV", "teleport"
  std::int64_t proposed = 0, accepted = 0;
};

struct RunFacts {
  int chains = 0;
  std::int64_t draws_per_chain = 0;        // kept (thinned) draws
  std::int64_t steps_per_chain = 0;        // sampler steps
  std::vector<MoveAcceptance> acceptance;  // summed over chains
  std::int64_t regenerations = -1;  // teleport regenerations over all chains; -1: not recorded
  std::string verdict;  // the run's own stopping-rule verdict, shown as given ("" for none)
  std::vector<std::pair<std::string, std::string>> extra;  // further facts, shown as given
};

struct ReportData {
  std::string title = "Posterior over DAG structures";
  std::string source;  // where the results come from (e.g. the run file), shown under the title
  std::vector<std::string> variables;
  std::vector<ChainTrace> traces;  // one per chain
  std::vector<ReportFeature> features;
  std::vector<FeatureTrace> feature_traces;           // the worst features, each drawn by chain
  std::vector<std::vector<double>> edge_probability;  // [from][to], n x n (diagonal NaN) or empty
  std::optional<Comparison> comparison;
  RunFacts run;
  std::vector<std::string> cautions;  // run-specific warnings, shown in the caution box
  double rhat_threshold = 1.01;       // converged: R-hat < this for every feature ...
  double ess_threshold = 400;         // ... and bulk and tail ESS > this
  double consensus_threshold = 0.5;
};

// The headline: the diagnostics layer's verdict (judge in diagnostics.hpp, the same rule as
// `covey check` and the chains' stopping rule) over the features, with thresholds
// rhat_threshold and ess_threshold.
using ConvergenceVerdict = Verdict;
ConvergenceVerdict assess_convergence(const ReportData& data);
// The verdict in the one wording of covey (verdict_text in diagnostics.hpp), with the caveats
// of the run's chains and of probabilities whose MCSE is unreliable.
VerdictText report_verdict_text(const ReportData& data);

// A feature's name for people, e.g. "smoker → cancer", "age — income", "log score".
std::string feature_label(const ReportFeature& feature, const std::vector<std::string>& names);

// The fixed caution shown on every report.
extern const char* const kCausalCaution;

// Writes the report folder `dir` (index.html and its images) atomically: everything is built in
// a temporary folder beside it and renamed into place, so an existing report is replaced only
// on success. An existing `dir` must be empty or an earlier covey report, which is replaced only
// with `overwrite` (the CLI's --force); see require_report_folder. Throws InputError for
// inconsistent data (indices out of range, lengths that differ), naming what is wrong.
void write_report(const ReportData& data, const std::string& dir, bool overwrite = false);

// The refusals of write_report before any work: a `dir` that exists and is not a folder, a
// folder with files that is not a covey report (InputError), and an earlier report without
// `overwrite` (OptionError naming the folder and {overwrite}). An empty folder is used.
void require_report_folder(const std::string& dir, bool overwrite);

}  // namespace covey
