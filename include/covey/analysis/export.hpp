#pragma once
// Exports of chain runs for scripts (`covey export`): the features' posterior probabilities with
// their MCSE and diagnostics as one CSV, and the per-draw edge indicators as a CSV of draws in
// the layout R's `posterior` reads as a draws_df (.chain, .iteration, .draw, then one column per
// variable) and pandas reads as a table. Missing values are written NA (R's and pandas' default
// missing marker).
#include <iosfwd>
#include <string>
#include <vector>

#include "covey/analysis/run_diagnostics.hpp"
#include "covey/graph/features.hpp"

namespace covey {

// The probabilities CSV: one row per feature with the header
//   kind,from,to,probability,mcse,mcse_reliable,rhat,ess_bulk,ess_tail
// kind is edge, adjacency, ancestor or score (from and to empty; probability is then the mean
// log score); mcse_reliable is FALSE for probabilities within 1/draws of 0 or 1
// (mcse_unreliable in diagnostics.hpp) and NA for the log score.
void write_feature_csv(std::ostream& out, const RunDiagnostics& diagnostics,
                       const std::vector<std::string>& names);

// The draws CSV: a header `.chain,.iteration,.draw,A->B,...` with one column per directed edge
// u -> v (u != v, from-major), then one row per kept draw of every chain: chain and iteration
// from 1, draw numbered across chains, and 0/1 for the edge.
void write_edge_draws_csv(std::ostream& out, const RunFeatures& draws,
                          const std::vector<std::string>& names);

// What `covey export` is asked for; at least one of the two outputs.
struct ExportRequest {
  std::vector<std::string> runs;                // run files taken together
  FeatureKinds kinds{true, true, true, false};  // of the probabilities CSV
  std::string probabilities;                    // path of the probabilities CSV, or empty
  std::string edge_draws;                       // path of the edge-draws CSV, or empty
  bool force = false;                           // replace existing files
};

// Checks the request before any work (OptionError naming {probabilities}/{edge_draws} when neither
// is given or both name one file; InputError for an existing file without `force`), opens the runs,
// and writes each CSV atomically (AtomicOutput): an existing file is replaced only by a complete
// new one.
void export_runs(const ExportRequest& request);

}  // namespace covey
