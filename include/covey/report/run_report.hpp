#pragma once
// The report model of chain runs: what `covey report` shows of one or more run files, built from
// their diagnostics (include/covey/analysis/run_diagnostics.hpp) into a plain ReportData
// (report.hpp).
#include <vector>

#include "covey/analysis/run_diagnostics.hpp"
#include "covey/report/report.hpp"

namespace covey {

// The report model of the runs: traces, every feature's diagnostics, the edge-probability
// matrix, the run facts (chains, steps, acceptance by move, regenerations) and run-specific
// cautions (not converged, undefined features, few tours). `diagnostics` must hold the edge
// features of `draws` (and may hold others).
ReportData report_data_from_runs(const std::vector<ChainRun>& runs, const RunFeatures& draws,
                                 const RunDiagnostics& diagnostics, const Thresholds& thresholds);

}  // namespace covey
