#pragma once
// The report model of chain runs: what `covey report` shows of one or more run files, built from
// their diagnostics (include/covey/analysis/run_diagnostics.hpp) into a plain ReportData
// (report.hpp).
#include <string>
#include <vector>

#include "covey/analysis/posterior_compare.hpp"
#include "covey/analysis/run_diagnostics.hpp"
#include "covey/report/report.hpp"

namespace covey {

// The report model of the runs: traces, every feature's diagnostics, the edge-probability
// matrix, the run facts (chains, steps, acceptance by move, regenerations) and run-specific
// cautions (not converged, undefined features, few tours). `diagnostics` must hold the edge
// features of `draws` (and may hold others).
ReportData report_data_from_runs(const std::vector<ChainRun>& runs, const RunFeatures& draws,
                                 const RunDiagnostics& diagnostics, const Thresholds& thresholds);

// What `covey report` is asked for.
struct RunReportRequest {
  std::vector<std::string> runs;  // run files taken together
  std::string compare;            // another posterior of the same table, or empty
  FeatureKinds kinds;             // edges are always added (heat map, consensus, comparison)
  Thresholds thresholds;
  double consensus = 0.5;          // edges above this form the consensus DAG, in [0, 1)
  std::string title;               // empty: the default title
  std::uint64_t memory_limit = 0;  // of the exact engine of a score table to compare; 0: default
};

// The report model of the request: opens the runs, loads the other posterior first (a file of
// another table fails before the long diagnostics: InputError), diagnoses, and compares the
// runs' edge probabilities (MCSE as standard errors) with it, with a caution when it is
// restricted to D_k. OptionError for thresholds or consensus out of range.
ReportData run_report_data(const RunReportRequest& request);

// The run's edge features of `diagnostics` against `other`, edge by edge.
Comparison compare_run_edges(const RunDiagnostics& diagnostics, const PosteriorEstimate& other,
                             const std::string& run_label);

}  // namespace covey
