#pragma once
// Convergence diagnostics of chain runs (docs/mathematics.md section 8): for every feature of the
// selected kinds, over all chains of one or more run files of the same table, its posterior mean (a
// probability for an indicator), rank-normalized split R-hat, bulk and tail ESS and MCSE
// (diagnostics.hpp); where teleports regenerated the chains, also the regenerative standard
// error over the tours between regenerations.
#include <string>
#include <vector>

#include "covey/chains/chain_run_file.hpp"
#include "covey/diagnostics/diagnostics.hpp"
#include "covey/graph/features.hpp"

namespace covey {

// Opens every run file (InputError naming the file), a manifest of a distributed run standing
// for its member files (run_member_files); see RunFeatures for the checks that they belong
// together.
std::vector<ChainRun> open_runs(const std::vector<std::string>& paths);

struct RunDiagnostics {
  int chains = 0;
  int iterations = 0;  // kept draws per chain
  std::size_t regenerations = 0;
  std::size_t tours = 0;  // complete tours between regenerations, all chains
  std::vector<FeatureId> features;
  std::vector<FeatureSummary> summaries;  // one per feature
  // Regenerative standard error of each feature's mean (NaN when fewer than 2 complete tours).
  std::vector<double> regenerative_se;
};

// Throws InputError when a run holds fewer draws per chain than the diagnostics need.
RunDiagnostics diagnose_run(const RunFeatures& draws, const std::vector<FeatureId>& features,
                            const ProgressCallback& progress = {});
// The same, showing a progress line labelled `label` on a terminal.
RunDiagnostics diagnose_run_with_progress(const RunFeatures& draws,
                                          const std::vector<FeatureId>& features,
                                          const std::string& label);

}  // namespace covey
