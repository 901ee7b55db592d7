// `covey score`: data (CSV) to a local score table (HDF5, or TSV for `-o X.tsv`).
#include <algorithm>
#include <chrono>
#include <iostream>

#include "command.hpp"
#include "common.hpp"
#include "core/progress.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"
#include "covey/data/data.hpp"
#include "covey/scores/score_io.hpp"
#include "covey/scores/scores.hpp"

namespace covey::cli {
namespace {

struct ScoreArgs {
  std::string data, output, forbid, require, prior = "uniform", memory_limit, delimiter;
  std::string count_column;
  std::vector<std::string> discrete_columns, bins;
  bool discrete = false, gaussian = false, drop_incomplete = false, allow_constant = false;
  bool raw_units = false, json = false, force = false;
  int threads = 0;
  ScoreOptions options;
  CLI::Option* ess = nullptr;
  CLI::Option* alpha_mu = nullptr;
  CLI::Option* alpha_w = nullptr;
  CLI::Option* raw_units_flag = nullptr;
  CLI::Option* edge_penalty = nullptr;
};

nlohmann::json columns_json(const DataTable& data) {
  nlohmann::json out = nlohmann::json::array();
  for (int v = 0; v < data.num_variables(); ++v)
    out.push_back({{"name", data.name(v)},
                   {"kind", to_string(data.variables()[v].kind)},
                   {"levels", data.variables()[v].levels},
                   {"became", data.column_origins().at(v)}});
  return out;
}

// What each column became, one line per way of reading (columns read alike share a line).
void print_columns(const DataTable& data, bool standardized) {
  if (data.kind() == VariableKind::kGaussian || data.is_mixed())
    std::cout << (standardized ? "Gaussian columns standardized to mean 0 and standard deviation "
                                 "1 before BGe (--raw-units keeps the units)\n"
                               : "Gaussian columns scored in their raw units (--raw-units)\n");
  std::vector<std::pair<std::string, std::vector<std::string>>> groups;
  for (int v = 0; v < data.num_variables(); ++v) {
    const std::string& origin = data.column_origins().at(v);
    auto group = std::find_if(groups.begin(), groups.end(),
                              [&](const auto& g) { return g.first == origin; });
    if (group == groups.end()) group = groups.insert(groups.end(), {origin, {}});
    group->second.push_back(data.name(v));
  }
  for (const auto& [origin, names] : groups) {
    std::cout << "  " << origin << ":";
    for (const std::string& name : names) std::cout << ' ' << name;
    std::cout << "\n";
  }
}

void run(ScoreArgs& a) {
  const auto start = std::chrono::steady_clock::now();
  require_output_path(a.output);
  a.options.prior = prior_kind_from_string(a.prior);
  if (a.edge_penalty->count() && a.options.prior != PriorKind::kEdgePenalty)
    throw InputError("--edge-penalty needs --prior edge-penalty");
  a.options.memory_limit = memory_limit(a.memory_limit);

  CsvOptions csv;
  csv.kind = a.discrete   ? ColumnKindChoice::kDiscrete
             : a.gaussian ? ColumnKindChoice::kGaussian
                          : ColumnKindChoice::kInfer;
  csv.delimiter = parse_delimiter(a.delimiter);
  csv.discrete_columns = a.discrete_columns;
  for (const std::string& bin : a.bins) csv.bins.push_back(parse_bin_spec(bin));
  csv.count_column = a.count_column;
  csv.drop_incomplete = a.drop_incomplete;
  csv.allow_constant = a.allow_constant;
  csv.memory_limit = a.options.memory_limit;
  const DataTable data = read_csv(a.data, csv);

  const bool mixed = data.is_mixed();
  const bool discrete = data.kind() == VariableKind::kDiscrete && !mixed;
  for (CLI::Option* opt : {a.alpha_mu, a.alpha_w, a.raw_units_flag})
    if (discrete && opt->count())
      throw InputError(opt->get_name() + " applies to Gaussian data (BGe), but " + a.data +
                       " is discrete");
  if (!discrete && !mixed && a.ess->count())
    throw InputError("--equivalent-sample-size applies to discrete data (BDeu), but " + a.data +
                     " is Gaussian");
  a.options.bge.standardize = !a.raw_units;
  a.options.constraints = read_edge_constraints(a.forbid, a.require, data.variables());
  // The inputs are valid: refuse an existing table before the scoring (save_scores checks again).
  require_new_output(a.output, a.force);

  const auto threads = apply_threads(a.threads);
  Progress progress("scoring");
  a.options.progress = [&progress](std::size_t done, std::size_t total) {
    progress.update(static_cast<double>(done), static_cast<double>(total), "parent sets");
  };
  const ScoreEstimate estimate = estimate_scoring(data.variables(), data.num_rows(), a.options);
  ScoreTable table = score_data(data, a.options);
  progress.finish();
  table.metadata().command_line = command_line();
  save_scores(table, a.output, a.force);
  // Notes come after success, so that a refusal stays a one-line message.
  for (const std::string& note : data.notes()) std::cerr << "covey score: note: " << note << "\n";
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();

  if (a.json) {
    print_json({{"output", a.output},
                {"score", table.metadata().score},
                {"prior", table.metadata().prior},
                {"variables", table.num_variables()},
                {"rows", data.num_rows()},
                {"rows_dropped", data.rows_dropped()},
                {"parent_sets", table.total_parent_sets()},
                {"seconds", seconds},
                {"memory_bytes", table.memory_bytes()},
                {"estimated_peak_bytes", estimate.bytes},
                {"columns", columns_json(data)},
                {"notes", data.notes()}});
    return;
  }
  std::cout << "wrote " << a.output << ": " << table.metadata().score << " scores, "
            << table.num_variables() << " variables, " << table.total_parent_sets()
            << " parent sets from " << data.num_rows() << " rows";
  if (data.rows_dropped()) std::cout << " (" << data.rows_dropped() << " incomplete rows dropped)";
  std::cout << ", " << format_number("%.2f", seconds) << " s\n";
  print_columns(data, a.options.bge.standardize);
}

void setup_score(CLI::App& app) {
  auto* cmd = app.add_subcommand(
      "score",
      "Compute local scores from a CSV: BDeu for discrete data, BGe for Gaussian data, the "
      "conditional-Gaussian score for tables of both kinds");
  auto a = std::make_shared<ScoreArgs>();
  cmd->add_option("DATA", a->data, "CSV file with a header row (docs/file-formats.md)")->required();
  cmd->add_option("-o,--output", a->output, "score table to write (HDF5; .tsv for TSV)")
      ->required();
  auto* discrete = cmd->add_flag("--discrete", a->discrete, "Read every column as labels (BDeu)");
  cmd->add_flag("--gaussian", a->gaussian, "Read every column as real numbers (BGe)")
      ->excludes(discrete);
  cmd->add_option("--discrete-columns", a->discrete_columns,
                  "Columns read as labels even when they hold numbers (comma-separated names; "
                  "default none)")
      ->delimiter(',')
      ->allow_extra_args(false);
  cmd->add_option("--bin", a->bins,
                  "Cut a numeric column into discrete levels: NAME=quantile:K (K bins of about "
                  "equal counts) or NAME=edges:E1,E2,... (bins x<=E1, E1<x<=E2, ..., x>Elast); "
                  "repeatable; default none")
      ->allow_extra_args(false);
  cmd->add_option("--count-column", a->count_column,
                  "Column of counts: each row stands for that many observations (aggregated "
                  "tables; default none)");
  cmd->add_option("--delimiter", a->delimiter,
                  "Field delimiter: one character such as ';', or tab (default: detected from the "
                  "header among ',', ';' and tab)");
  cmd->add_flag("--drop-incomplete", a->drop_incomplete,
                "Drop rows with a missing cell (empty or NA) instead of refusing the file");
  cmd->add_flag("--allow-constant", a->allow_constant, "Keep discrete columns with a single level");
  a->ess = cmd->add_option("--equivalent-sample-size", a->options.equivalent_sample_size,
                           "BDeu equivalent sample size (default 1)")
               ->check(kPositive);
  a->alpha_mu = cmd->add_option("--bge-alpha-mu", a->options.bge.alpha_mu,
                                "BGe prior weight of the mean (default 1)")
                    ->check(kPositive);
  a->alpha_w = cmd->add_option("--bge-alpha-w", a->options.bge.alpha_w,
                               "BGe Wishart degrees of freedom, > n+1 (default n+2)");
  a->raw_units_flag = cmd->add_flag(
      "--raw-units", a->raw_units,
      "BGe: score Gaussian columns in their own units (default: standardize each column to mean "
      "0 and standard deviation 1, so the scores do not depend on units)");
  cmd->add_option("--prior", a->prior, "Structure prior: uniform, edge-penalty or parent-count")
      ->check(CLI::IsMember({"uniform", "edge-penalty", "parent-count"}))
      ->capture_default_str();
  a->edge_penalty = cmd->add_option("--edge-penalty", a->options.edge_penalty,
                                    "Prior log-odds against each edge (--prior edge-penalty; "
                                    "log factor -penalty*|S|; default 1)");
  cmd->add_option("--max-indegree", a->options.max_indegree, "Most parents per node (default 3)")
      ->check(kNonNegative);
  cmd->add_option("--candidates", a->options.candidates,
                  "Candidate parents per node, chosen by a pairwise screen (1-64; default all for "
                  "n <= 20 variables, else 20)")
      ->check(CLI::Range(1, kMaxCandidates));
  cmd->add_option("--forbid", a->forbid,
                  "TSV of forbidden edges: from<TAB>to per line (default: none)");
  cmd->add_option("--require", a->require,
                  "TSV of required edges: from<TAB>to per line (default: none)");
  add_memory_limit_option(*cmd, a->memory_limit);
  add_threads_option(*cmd, a->threads);
  add_force_option(*cmd, a->force);
  cmd->add_flag("--json", a->json, "Print a JSON summary");
  cmd->callback([a] { run(*a); });
}

const Registration score_registration(10, setup_score);

}  // namespace
}  // namespace covey::cli
