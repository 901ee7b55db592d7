// `covey export RUNS --probabilities P.csv --edge-draws D.csv`: the runs' feature probabilities
// with MCSE, and their per-draw edge indicators, as CSV for scripts (analysis/export.hpp).
#include <iostream>

#include "command.hpp"
#include "common.hpp"
#include "covey/analysis/export.hpp"

namespace covey::cli {
namespace {

struct ExportOptions {
  ExportRequest request;
  std::string features = "edges,adjacencies,ancestors";
  int threads = 0;
};

void setup_export(CLI::App& app) {
  auto* cmd = app.add_subcommand(
      "export",
      "CSV files for scripts: posterior probabilities of edges, adjacencies and ancestor "
      "relations with MCSE, R-hat and ESS, and the per-draw edge indicators of every chain (read "
      "by R's posterior::as_draws_df and by pandas)");
  auto o = std::make_shared<ExportOptions>();
  cmd->add_option("RUNS", o->request.runs,
                  "chain-run files of `covey chain` (several: their chains taken together)")
      ->required();
  cmd->add_option("--probabilities", o->request.probabilities,
                  "CSV of one row per feature: kind, from, to, probability, mcse, "
                  "mcse_reliable, rhat, ess_bulk, ess_tail (NA: undefined; default: not written)");
  cmd->add_option("--edge-draws", o->request.edge_draws,
                  "CSV of draws: .chain, .iteration, .draw and one 0/1 column per directed edge "
                  "(named FROM->TO; default: not written)");
  cmd->add_option("--features", o->features,
                  "Feature kinds of --probabilities, comma-separated: edges, adjacencies, "
                  "ancestors, score")
      ->capture_default_str();
  add_force_option(*cmd, o->request.force);
  add_threads_option(*cmd, o->threads);
  cmd->callback([o] {
    const auto threads = apply_threads(o->threads);
    o->request.kinds = parse_feature_kinds(o->features, "--features");
    export_runs(o->request);
    for (const std::string* path : {&o->request.probabilities, &o->request.edge_draws})
      if (!path->empty()) std::cout << "wrote " << *path << "\n";
  });
}

const Registration export_registration(85, setup_export);

}  // namespace
}  // namespace covey::cli
