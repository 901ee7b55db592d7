// `covey check`: convergence diagnostics (split R-hat, bulk and tail ESS, MCSE) of MCMC draws,
// worst first, and a verdict against thresholds. The positional arguments are input files;
// --draws reads them as CSV draws of named quantities.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <iomanip>
#include <iostream>
#include <limits>
#include <string>
#include <vector>

#include "command.hpp"
#include "common.hpp"
#include "covey/diagnostics.hpp"
#include "covey/draws_csv.hpp"
#include "covey/error.hpp"
#include "covey/progress.hpp"

namespace covey::cli {
namespace {

struct CheckOptions {
  std::vector<std::string> files;
  bool draws = false;
  bool json = false;
  bool strict = false;
  Thresholds thresholds;
  int threads = 0;
};

// The checked features of one input: how each is labelled in the report, and its diagnostics.
struct CheckedInput {
  std::string source;
  int chains = 0;
  int iterations = 0;
  std::string plural = "features";         // the report's word for the features
  std::string mean_key = "mean";           // JSON key of the feature mean ("probability" for 0/1)
  std::vector<nlohmann::json> labels;      // {"kind": ..., and "name" or "from"/"to"}
  std::vector<std::string> display_names;  // for the text table
  std::vector<FeatureSummary> summaries;
};

CheckedInput check_draws_csv(const std::string& path) {
  const DrawsTable table = read_draws_csv(path);
  CheckedInput in;
  in.source = path;
  in.chains = table.chains;
  in.iterations = table.iterations;
  in.plural = "quantities";
  for (const std::string& name : table.names) {
    in.labels.push_back({{"kind", "quantity"}, {"name", name}});
    in.display_names.push_back(name);
  }
  Progress progress("check: diagnostics");
  const auto total = static_cast<double>(table.names.size());
  in.summaries = summarize_features(
      table.names.size(), table.chains, table.iterations,
      [&table](std::size_t q, std::span<double> values) {
        std::copy(table.columns[q].begin(), table.columns[q].end(), values.begin());
      },
      [&progress, total](std::size_t done) { progress.update(static_cast<double>(done), total); });
  return in;
}

CheckedInput check_input(const CheckOptions& options) {
  if (!options.draws)
    throw InputError(
        "check: give the draws as CSV with --draws FILE.csv (columns chain, "
        "iteration and one per quantity)");
  if (options.files.size() != 1)
    throw InputError("check --draws: expected one CSV file, got " +
                     std::to_string(options.files.size()));
  return check_draws_csv(options.files[0]);
}

// JSON has no NaN or infinity: undefined values are null, infinite ones the string "inf".
nlohmann::json json_number(double x) {
  if (std::isnan(x)) return nullptr;
  if (std::isinf(x)) return x > 0 ? "inf" : "-inf";
  return x;
}

std::string format(const char* spec, double x) {
  if (std::isnan(x)) return "undef";
  if (std::isinf(x)) return x > 0 ? "inf" : "-inf";
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, spec, x);
  return buffer;
}

std::string threshold_text(const Thresholds& t) {
  return "R-hat < " + format("%g", t.max_rhat) + " and bulk and tail ESS > " +
         format("%g", t.min_ess);
}

std::string verdict_line(const CheckedInput& in, const Verdict& v, const Thresholds& t) {
  const std::size_t total = v.passing + v.failing + v.undefined;
  std::string line = "verdict: ";
  if (v.passing + v.failing == 0) {
    line += "not assessed: all " + std::to_string(total) + " " + in.plural +
            " have undefined R-hat or ESS (constant draws)";
    return line;
  }
  if (v.converged())
    line += "converged: all " + std::to_string(v.passing) + " assessed " + in.plural + " have " +
            threshold_text(t);
  else
    line += "not converged: " + std::to_string(v.failing) + " of " +
            std::to_string(v.passing + v.failing) + " assessed " + in.plural +
            " fail (required: " + threshold_text(t) + ")";
  if (v.undefined > 0)
    line += "; " + std::to_string(v.undefined) +
            " undefined (R-hat or ESS undefined, e.g. constant draws), not assessed";
  return line;
}

nlohmann::json report_json(const CheckedInput& in, const std::vector<std::size_t>& order,
                           const Verdict& v, const Thresholds& t) {
  nlohmann::json out;
  out["source"] = in.source;
  out["chains"] = in.chains;
  out["draws_per_chain"] = in.iterations;
  out["max_rhat"] = json_number(v.max_rhat);
  out["min_ess_bulk"] = json_number(v.min_ess_bulk);
  out["min_ess_tail"] = json_number(v.min_ess_tail);
  out["thresholds"] = {{"rhat", t.max_rhat}, {"ess", t.min_ess}};
  out["verdict"] = {{"converged", v.converged()},
                    {"passing", v.passing},
                    {"failing", v.failing},
                    {"undefined", v.undefined}};
  out["features"] = nlohmann::json::array();
  for (std::size_t i : order) {
    const FeatureSummary& s = in.summaries[i];
    nlohmann::json f = in.labels[i];
    f[in.mean_key] = json_number(s.mean);
    f["rhat"] = json_number(s.rhat);
    f["ess_bulk"] = json_number(s.ess_bulk);
    f["ess_tail"] = json_number(s.ess_tail);
    f["ess_mean"] = json_number(s.ess_mean);
    f["mcse"] = json_number(s.mcse);
    f["status"] = to_string(assess(s, t));
    out["features"].push_back(std::move(f));
  }
  return out;
}

void print_report(const CheckedInput& in, const std::vector<std::size_t>& order, const Verdict& v,
                  const Thresholds& t) {
  std::cout << in.source << ": " << in.chains << " chains x " << in.iterations << " draws, "
            << in.summaries.size() << " " << in.plural << " (worst first)\n";
  std::size_t width = 8;
  for (const std::string& name : in.display_names) width = std::max(width, name.size());
  const auto row = [&](const std::string& name, const std::string& mean, const std::string& rhat,
                       const std::string& bulk, const std::string& tail, const std::string& mcse,
                       const std::string& status) {
    std::cout << std::left << std::setw(static_cast<int>(width)) << name << std::right << ' '
              << std::setw(12) << mean << ' ' << std::setw(8) << rhat << ' ' << std::setw(9) << bulk
              << ' ' << std::setw(9) << tail << ' ' << std::setw(10) << mcse << "  " << status
              << '\n';
  };
  row("name", in.mean_key, "R-hat", "ess_bulk", "ess_tail", "mcse", "status");
  for (std::size_t i : order) {
    const FeatureSummary& s = in.summaries[i];
    row(in.display_names[i], format("%.6g", s.mean), format("%.4f", s.rhat),
        format("%.0f", s.ess_bulk), format("%.0f", s.ess_tail), format("%.3g", s.mcse),
        to_string(assess(s, t)));
  }
  std::cout << verdict_line(in, v, t) << "\n";
}

void setup_check(CLI::App& app) {
  auto* cmd = app.add_subcommand(
      "check",
      "Convergence diagnostics of MCMC draws: split R-hat, bulk and tail ESS and MCSE per "
      "feature (Vehtari et al. 2021), worst first, and a verdict against thresholds");
  auto options = std::make_shared<CheckOptions>();
  cmd->add_option("FILES", options->files, "input files (with --draws: one CSV of draws)")
      ->required();
  cmd->add_flag("--draws", options->draws,
                "Read FILES as CSV draws: a header with columns chain, iteration and one column "
                "per quantity, then one row per draw");
  cmd->add_flag("--json", options->json,
                "Print JSON (undefined values are null, infinite ones \"inf\")");
  cmd->add_flag("--strict", options->strict, "Exit with status 4 unless the verdict is converged");
  cmd->add_option("--rhat", options->thresholds.max_rhat, "R-hat must be below this")
      ->capture_default_str()
      ->check(CLI::Range(1.0, std::numeric_limits<double>::max()));
  cmd->add_option("--ess", options->thresholds.min_ess, "bulk and tail ESS must exceed this")
      ->capture_default_str()
      ->check(CLI::NonNegativeNumber);
  add_threads_option(*cmd, options->threads);
  cmd->callback([options] {
    const auto limit = apply_threads(options->threads);
    const CheckedInput in = check_input(*options);
    const Thresholds& t = options->thresholds;
    const std::vector<std::size_t> order = worst_first(in.summaries, t);
    const Verdict verdict = judge(in.summaries, t);
    if (options->json)
      print_json(report_json(in, order, verdict, t));
    else
      print_report(in, order, verdict, t);
    if (options->strict && !verdict.converged())
      throw CommandExit(
          4, "check --strict: thresholds not met (" + threshold_text(t) + "); exit status 4");
  });
}

const Registration check_registration(60, setup_check);

}  // namespace
}  // namespace covey::cli
