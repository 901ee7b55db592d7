// `covey score`: data (CSV) to a local score table (HDF5, or TSV for `-o X.tsv`).
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
  std::string data, output, forbid, require, prior = "uniform", memory_limit;
  bool discrete = false, gaussian = false, drop_incomplete = false, allow_constant = false;
  bool standardize = false, json = false;
  int threads = 0;
  ScoreOptions options;
  CLI::Option* ess = nullptr;
  CLI::Option* alpha_mu = nullptr;
  CLI::Option* alpha_w = nullptr;
  CLI::Option* standardize_flag = nullptr;
  CLI::Option* edge_penalty = nullptr;
};

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
  csv.drop_incomplete = a.drop_incomplete;
  csv.allow_constant = a.allow_constant;
  csv.memory_limit = a.options.memory_limit;
  const DataTable data = read_csv(a.data, csv);

  const bool discrete = data.kind() == VariableKind::kDiscrete;
  for (CLI::Option* opt : {a.alpha_mu, a.alpha_w, a.standardize_flag})
    if (discrete && opt->count())
      throw InputError(opt->get_name() + " applies to Gaussian data (BGe), but " + a.data +
                       " is discrete");
  if (!discrete && a.ess->count())
    throw InputError("--equivalent-sample-size applies to discrete data (BDeu), but " + a.data +
                     " is Gaussian");
  a.options.bge.standardize = a.standardize;
  a.options.constraints = read_edge_constraints(a.forbid, a.require, data.variables());

  const auto threads = apply_threads(a.threads);
  Progress progress("scoring");
  a.options.progress = [&progress](std::size_t done, std::size_t total) {
    progress.update(static_cast<double>(done), static_cast<double>(total), "parent sets");
  };
  const ScoreEstimate estimate = estimate_scoring(data.variables(), data.num_rows(), a.options);
  ScoreTable table = score_data(data, a.options);
  progress.finish();
  table.metadata().command_line = command_line();
  save_scores(table, a.output);
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
                {"estimated_peak_bytes", estimate.bytes}});
    return;
  }
  std::cout << "wrote " << a.output << ": " << table.metadata().score << " scores, "
            << table.num_variables() << " variables, " << table.total_parent_sets()
            << " parent sets from " << data.num_rows() << " rows";
  if (data.rows_dropped()) std::cout << " (" << data.rows_dropped() << " incomplete rows dropped)";
  std::cout << ", " << format_number("%.2f", seconds) << " s\n";
}

void setup_score(CLI::App& app) {
  auto* cmd = app.add_subcommand(
      "score", "Compute local scores (BDeu for discrete data, BGe for Gaussian data) from a CSV");
  auto a = std::make_shared<ScoreArgs>();
  cmd->add_option("DATA", a->data, "CSV file with a header row (docs/file-formats.md)")->required();
  cmd->add_option("-o,--output", a->output, "score table to write (HDF5; .tsv for TSV)")
      ->required();
  auto* discrete = cmd->add_flag("--discrete", a->discrete, "Read every column as labels (BDeu)");
  cmd->add_flag("--gaussian", a->gaussian, "Read every column as real numbers (BGe)")
      ->excludes(discrete);
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
  a->standardize_flag = cmd->add_flag("--standardize", a->standardize,
                                      "BGe: scale each column to mean 0 and standard deviation 1");
  cmd->add_option("--prior", a->prior, "Structure prior: uniform, edge-penalty or parent-count")
      ->check(CLI::IsMember({"uniform", "edge-penalty", "parent-count"}));
  a->edge_penalty = cmd->add_option("--edge-penalty", a->options.edge_penalty,
                                    "Prior log-odds against each edge (--prior edge-penalty; "
                                    "log factor -penalty*|S|; default 1)");
  cmd->add_option("--max-indegree", a->options.max_indegree, "Most parents per node (default 3)")
      ->check(kNonNegative);
  cmd->add_option("--candidates", a->options.candidates,
                  "Candidate parents per node, chosen by a pairwise screen (1-64; default all for "
                  "n <= 20 variables, else 20)")
      ->check(CLI::Range(1, kMaxCandidates));
  cmd->add_option("--forbid", a->forbid, "TSV of forbidden edges: from<TAB>to per line");
  cmd->add_option("--require", a->require, "TSV of required edges: from<TAB>to per line");
  add_memory_limit_option(*cmd, a->memory_limit);
  add_threads_option(*cmd, a->threads);
  cmd->add_flag("--json", a->json, "Print a JSON summary");
  cmd->callback([a] { run(*a); });
}

const Registration score_registration(10, setup_score);

}  // namespace
}  // namespace covey::cli
