// `covey report RUN.h5 [MORE.h5 ...] -o DIR`: the visual report of a chain run (report.hpp):
// traces, R-hat and ESS distributions, edge-probability heat map, consensus DAG and, with
// --compare, the run against another posterior edge by edge.
#include <cmath>
#include <iostream>

#include "command.hpp"
#include "common.hpp"
#include "core/progress.hpp"
#include "covey/analysis/posterior_compare.hpp"
#include "covey/analysis/run_diagnostics.hpp"
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
  double consensus = 0.5;
  Thresholds thresholds;
  bool json = false;
  int threads = 0;
};

// The run's edge probabilities (MCSE as their standard errors) against another posterior's.
Comparison compare_with(const RunDiagnostics& d, const PosteriorEstimate& other,
                        const std::string& run_label) {
  Comparison c;
  c.label_a = run_label;
  c.label_b = other.label();
  for (std::size_t i = 0; i < d.features.size(); ++i) {
    const FeatureId& f = d.features[i];
    if (f.kind != FeatureKind::kEdge) continue;
    const Estimate b = other.feature(f);
    c.pairs.push_back({f.from, f.to, d.summaries[i].mean, b.value, d.summaries[i].mcse,
                       b.se > 0 ? b.se : std::nan("")});
  }
  return c;
}

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
                  "cover-bounded draws, exact draws, a score table (exact), or a chain run");
  cmd->add_option("--features", o->features,
                  "Feature kinds diagnosed, comma-separated: edges, adjacencies, ancestors, score")
      ->capture_default_str();
  cmd->add_option("--consensus", o->consensus,
                  "Edges with posterior probability above this form the consensus DAG")
      ->capture_default_str();
  cmd->add_option("--rhat", o->thresholds.max_rhat, "R-hat must be below this (> 1)")
      ->capture_default_str();
  cmd->add_option("--ess", o->thresholds.min_ess, "bulk and tail ESS must exceed this")
      ->capture_default_str()
      ->check(kPositive);
  cmd->add_option("--title", o->title, "Title of the page");
  cmd->add_flag("--json", o->json, "Print JSON: output folder, verdict, features");
  add_threads_option(*cmd, o->threads);
  cmd->callback([o] {
    const auto threads = apply_threads(o->threads);
    if (!(o->thresholds.max_rhat > 1))
      throw InputError("report: --rhat must exceed 1, got " +
                       format_number("%g", o->thresholds.max_rhat));
    if (!(o->consensus >= 0 && o->consensus < 1))
      throw InputError("report: --consensus must lie in [0, 1), got " +
                       format_number("%g", o->consensus));
    FeatureKinds kinds = parse_feature_kinds(o->features, "--features");
    kinds.edges = true;  // the heat map, consensus DAG and comparison need them
    const std::vector<ChainRun> runs = open_runs(o->runs);
    // Read the other side first: a wrong file fails before the long diagnostics.
    std::optional<PosteriorEstimate> other;
    if (!o->compare.empty()) {
      CompareOptions co;
      co.kinds = FeatureKinds{true, false, false, false};
      other.emplace(PosteriorEstimate::load({o->compare}, co));
      if (other->variables() != runs.front().variables() ||
          other->table_fingerprint() != runs.front().table_fingerprint())
        throw InputError(o->compare + ": made from another score table than " + o->runs.front());
    }
    const RunFeatures draws(runs, kinds.ancestors);
    const std::vector<FeatureId> features = list_features(draws.num_variables(), kinds);
    const RunDiagnostics d = diagnose_run_with_progress(draws, features, "report: diagnostics");
    ReportData data = report_data_from_runs(runs, draws, d, o->thresholds);
    if (!o->title.empty()) data.title = o->title;
    data.consensus_threshold = o->consensus;
    if (other) {
      data.comparison = compare_with(d, *other, "chain run (" + o->runs.front() + ")");
      if (other->source() == PosteriorSource::kCoverDraws)
        data.cautions.push_back(
            "The comparison's second posterior is restricted to the DAGs whose moral graph has "
            "a vertex cover of at most " +
            std::to_string(other->cover_bound()) +
            " vertices; differences show what that restriction changes, not errors.");
    }
    write_report(data, o->output);
    const ConvergenceVerdict v = assess_convergence(data);
    const char* state = v.state == ConvergenceVerdict::State::kConverged      ? "converged"
                        : v.state == ConvergenceVerdict::State::kNotConverged ? "not converged"
                                                                              : "undetermined";
    if (o->json) {
      print_json({{"output", o->output},
                  {"page", o->output + "/index.html"},
                  {"verdict", state},
                  {"features", v.features},
                  {"failing", v.failing},
                  {"undefined", v.undefined}});
      return;
    }
    std::cout << "report written to " << o->output << "/index.html (" << state << ": " << v.failing
              << " of " << v.features << " features fail, " << v.undefined << " undefined)\n";
  });
}

const Registration report_registration(80, setup_report);

}  // namespace
}  // namespace covey::cli
