// `covey report RUN.h5 [MORE.h5 ...] -o DIR`: the visual report of a chain run (report.hpp):
// traces, R-hat and ESS distributions, edge-probability heat map, consensus DAG and, with
// --compare, the run against another posterior edge by edge.
#include <cmath>
#include <iostream>

#include "command.hpp"
#include "common.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/report/report.hpp"
#include "covey/report/run_report.hpp"

namespace covey::cli {
namespace {

struct ReportOptions {
  std::vector<std::string> runs;
  std::string compare, output, title;
  std::string features = "edges,adjacencies,ancestors,score";
  std::string memory_limit;
  double consensus = 0.5;
  Thresholds thresholds;
  bool json = false, force = false;
  int threads = 0;
};

void setup_report(CLI::App& app) {
  auto* cmd = app.add_subcommand(
      "report",
      "A self-contained HTML report of a chain run (traces, R-hat and ESS, edge heat map, "
      "consensus DAG; with --compare the run against another posterior), with its figures as "
      "PNG and SVG");
  auto o = std::make_shared<ReportOptions>();
  cmd->add_option("RUNS", o->runs,
                  "chain-run files of `covey chain` (several: their chains taken together)")
      ->required();
  cmd->add_option("-o,--output", o->output, "folder for index.html and its figures")->required();
  cmd->add_option("--compare", o->compare,
                  "Another result of the same table to compare edge by edge: exact "
                  "cover-bounded draws, exact draws, a score table (exact), or a chain run "
                  "(default: none)");
  cmd->add_option("--features", o->features,
                  "Feature kinds diagnosed, comma-separated: edges, adjacencies, ancestors, score")
      ->capture_default_str();
  cmd->add_option("--consensus", o->consensus,
                  "Edges with posterior probability above this form the consensus DAG")
      ->capture_default_str();
  cmd->add_option("--rhat", o->thresholds.max_rhat, "R-hat must be below this (> 1)")
      ->capture_default_str();
  cmd->add_option("--ess", o->thresholds.min_ess, "bulk and tail ESS must exceed this (>= 0)")
      ->capture_default_str()
      ->check(kNonNegative);
  cmd->add_option("--title", o->title,
                  "Title of the page (default: Posterior over DAG structures)");
  add_memory_limit_option(*cmd, o->memory_limit);
  add_force_option(*cmd, o->force);
  cmd->add_flag("--json", o->json, "Print JSON: output folder, verdict, features");
  add_threads_option(*cmd, o->threads);
  cmd->callback([o] {
    const auto threads = apply_threads(o->threads);
    // An existing report is refused before the runs are read (write_report checks again).
    require_report_folder(o->output, o->force);
    RunReportRequest request;
    request.runs = o->runs;
    request.compare = o->compare;
    request.kinds = parse_feature_kinds(o->features, "--features");
    request.thresholds = o->thresholds;
    request.consensus = o->consensus;
    request.title = o->title;
    request.memory_limit = memory_limit(o->memory_limit);
    const ReportData data = run_report_data(request);
    write_report(data, o->output, o->force);
    const ConvergenceVerdict v = assess_convergence(data);
    const char* state = to_string(v.state);
    const VerdictText text = report_verdict_text(data);
    if (o->json) {
      print_json({{"output", o->output},
                  {"page", o->output + "/index.html"},
                  {"verdict", state},
                  {"features", v.features},
                  {"failing", v.failing},
                  {"undefined", v.undefined},
                  {"text", text.outcome},
                  {"caveats", text.caveats}});
      return;
    }
    std::cout << "report written to " << o->output << "/index.html\nverdict: " << text.outcome
              << "\n";
    if (!text.measures.empty()) std::cout << "  " << text.measures << "\n";
    for (const std::string& caveat : text.caveats) std::cout << "  caveat: " << caveat << "\n";
  });
}

const Registration report_registration(80, setup_report);

}  // namespace
}  // namespace covey::cli
