// `covey check`: convergence diagnostics (split R-hat, bulk and tail ESS, MCSE) of MCMC draws,
// worst first, and a verdict against thresholds. The positional arguments are chain-run files
// (taken together: their chains side by side), or --draws-csv one CSV of named quantities.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <iomanip>
#include <iostream>
#include <string>
#include <vector>

#include "command.hpp"
#include "common.hpp"
#include "covey/analysis/check.hpp"
#include "covey/core/error.hpp"
#include "covey/diagnostics/diagnostics.hpp"

namespace covey::cli {
namespace {

struct CheckOptions {
  std::vector<std::string> files;
  std::string draws_csv;
  std::string features = "edges,adjacencies,ancestors,score";
  std::size_t top = 20;
  bool json = false;
  bool strict = false;
  Thresholds thresholds;
  int threads = 0;
};

// The files, after the command-line checks the library does not know about.
CheckResult check_input(const CheckOptions& options) {
  if (!options.draws_csv.empty()) {
    if (!options.files.empty())
      throw InputError("check --draws-csv: reads one CSV and no chain-run files (got " +
                       options.files.front() + " too)");
    return check_draws_csv(options.draws_csv, options.thresholds);
  }
  if (options.files.empty())
    throw InputError("check: give chain-run files, or --draws-csv FILE for a CSV of draws");
  const FeatureKinds kinds = parse_feature_kinds(options.features, "--features");
  for (const std::string& file : options.files)
    if (file.size() > 4 && file.compare(file.size() - 4, 4, ".csv") == 0)
      throw InputError(
          file + ": CSV is read as draws with --draws-csv (covey check --draws-csv FILE.csv)");
  return check_chain_runs(options.files, kinds, options.thresholds);
}

nlohmann::json report_json(const CheckResult& in) {
  const Verdict& v = in.verdict;
  const Thresholds& t = in.thresholds;
  nlohmann::json out;
  out["source"] = in.source;
  out["chains"] = in.chains;
  out["draws_per_chain"] = in.iterations;
  out["max_rhat"] = json_number(v.max_rhat);
  out["min_ess_bulk"] = json_number(v.min_ess_bulk);
  out["min_ess_tail"] = json_number(v.min_ess_tail);
  out["thresholds"] = {{"rhat", t.max_rhat}, {"ess", t.min_ess}};
  if (in.regenerations > 0)
    out["regeneration"] = {{"regenerations", in.regenerations}, {"complete_tours", in.tours}};
  const auto counts = [](const Verdict::Counts& c) {
    return nlohmann::json{
        {"passing", c.passing}, {"failing", c.failing}, {"undefined", c.undefined}};
  };
  const VerdictText text = verdict_text(in);
  out["verdict"] = {{"converged", v.converged()},
                    {"state", to_string(v.state)},
                    {"passing", v.passing},
                    {"failing", v.failing},
                    {"undefined", v.undefined},
                    {"rhat", counts(v.rhat)},
                    {"ess_bulk", counts(v.ess_bulk)},
                    {"ess_tail", counts(v.ess_tail)},
                    {"unreliable_mcse", in.context.unreliable_mcse},
                    {"text", text.outcome},
                    {"caveats", text.caveats}};
  out["features"] = nlohmann::json::array();
  for (std::size_t i : in.worst_first) {
    const FeatureSummary& s = in.summaries[i];
    const CheckedItem& item = in.items[i];
    nlohmann::json f = {{"kind", item.kind}};
    if (!item.name.empty()) f["name"] = item.name;
    if (!item.from.empty()) f["from"] = item.from;
    if (!item.to.empty()) f["to"] = item.to;
    f[item.mean_key] = json_number(s.mean);
    f["rhat"] = json_number(s.rhat);
    f["ess_bulk"] = json_number(s.ess_bulk);
    f["ess_tail"] = json_number(s.ess_tail);
    f["ess_mean"] = json_number(s.ess_mean);
    f["mcse"] = json_number(s.mcse);
    if (!in.regenerative_se.empty()) f["regenerative_se"] = json_number(in.regenerative_se[i]);
    f["status"] = to_string(in.status[i]);
    out["features"].push_back(std::move(f));
  }
  return out;
}

// The text table lists the assessed features worst first; the undefined ones (mostly features
// constant in every draw, such as edges never proposed successfully) are summarized in one
// line, since dozens of identical "undef" rows would hide the features that matter.
void print_report(const CheckResult& in, std::size_t top) {
  std::vector<std::size_t> order, undefined;
  for (std::size_t i : in.worst_first)
    (in.status[i] == FeatureStatus::kUndefined ? undefined : order).push_back(i);
  const std::size_t shown = top == 0 ? order.size() : std::min(top, order.size());
  std::cout << in.source << ": " << in.chains << " chains x " << in.iterations << " draws, "
            << in.summaries.size() << " " << in.plural << " (worst first";
  if (shown < order.size())
    std::cout << ", " << shown << " of " << order.size() << " assessed shown";
  std::cout << ")\n";
  if (in.regenerations > 0)
    std::cout << "regenerations (teleports, whole-set blocks): " << in.regenerations << " ("
              << in.tours << " complete tours)"
              << (in.regenerative_se.empty() ? "" : "; regen_se: regenerative standard error")
              << "\n";
  std::size_t width = 8;
  for (std::size_t k = 0; k < shown; ++k)
    width = std::max(width, display_width(in.items[order[k]].display_name));
  const bool regen = !in.regenerative_se.empty();
  const auto row = [&](const std::string& name, const std::string& mean, const std::string& rhat,
                       const std::string& bulk, const std::string& tail, const std::string& mcse,
                       const std::string& regen_se, const std::string& status) {
    std::cout << pad_right(name, width) << ' ' << std::setw(12) << mean << ' ' << std::setw(8)
              << rhat << ' ' << std::setw(9) << bulk << ' ' << std::setw(9) << tail << ' '
              << std::setw(10) << mcse;
    if (regen) std::cout << ' ' << std::setw(10) << regen_se;
    std::cout << "  " << status << '\n';
  };
  row("name", "mean", "R-hat", "ess_bulk", "ess_tail", "mcse", "regen_se", "status");
  for (std::size_t k = 0; k < shown; ++k) {
    const std::size_t i = order[k];
    const FeatureSummary& s = in.summaries[i];
    row(in.items[i].display_name, format_number("%.6g", s.mean), format_number("%.4f", s.rhat),
        format_number("%.0f", s.ess_bulk), format_number("%.0f", s.ess_tail),
        format_number("%.3g", s.mcse), regen ? format_number("%.3g", in.regenerative_se[i]) : "",
        to_string(in.status[i]));
  }
  if (shown < order.size())
    std::cout << "... " << order.size() - shown << " more (all with --top 0 or --json)\n";
  if (!undefined.empty()) {
    std::cout << undefined.size() << " " << in.plural
              << " with undefined R-hat or ESS (constant in every draw), not assessed, e.g. ";
    for (std::size_t k = 0; k < std::min<std::size_t>(3, undefined.size()); ++k)
      std::cout << (k ? ", " : "") << in.items[undefined[k]].display_name << " = "
                << format_number("%.6g", in.summaries[undefined[k]].mean);
    std::cout << "\n";
  }
  const VerdictText text = verdict_text(in);
  std::cout << "verdict: " << text.outcome << "\n";
  if (!text.measures.empty()) std::cout << "  " << text.measures << "\n";
  for (const std::string& caveat : text.caveats) std::cout << "  caveat: " << caveat << "\n";
}

void setup_check(CLI::App& app) {
  auto* cmd = app.add_subcommand(
      "check",
      "Convergence diagnostics of MCMC draws: split R-hat, bulk and tail ESS and MCSE per "
      "feature (Vehtari et al. 2021), worst first, and a verdict against thresholds; for chain "
      "runs with teleports also the regenerative standard error");
  auto options = std::make_shared<CheckOptions>();
  cmd->add_option("FILES", options->files,
                  "chain-run files of `covey chain` (several: their chains taken together)");
  cmd->add_option("--features", options->features,
                  "Feature kinds of a chain run, comma-separated: edges, adjacencies, ancestors, "
                  "score")
      ->capture_default_str();
  add_top_option(*cmd, options->top);
  cmd->add_option("--draws-csv", options->draws_csv,
                  "Diagnose a CSV of draws instead of chain runs: a header with columns chain, "
                  "iteration (or R posterior's .chain, .iteration, .draw) and one column per "
                  "quantity, then one row per draw (default: none)");
  cmd->add_flag("--json", options->json,
                "Print JSON (undefined values are null, infinite ones \"inf\")");
  cmd->add_flag("--strict", options->strict, "Exit with status 4 unless the verdict is converged");
  cmd->add_option("--rhat", options->thresholds.max_rhat, "R-hat must be below this (> 1)")
      ->capture_default_str();
  cmd->add_option("--ess", options->thresholds.min_ess, "bulk and tail ESS must exceed this (>= 0)")
      ->capture_default_str()
      ->check(kNonNegative);
  add_threads_option(*cmd, options->threads);
  cmd->callback([options] {
    check_thresholds(options->thresholds);
    const auto limit = apply_threads(options->threads);
    const CheckResult in = check_input(*options);
    if (options->json)
      print_json(report_json(in));
    else
      print_report(in, options->top);
    if (options->strict && !in.verdict.converged())
      throw CommandExit(4, "check --strict: thresholds not met (" + threshold_text(in.thresholds) +
                               "); exit status 4");
  });
}

const Registration check_registration(60, setup_check);

}  // namespace
}  // namespace covey::cli
