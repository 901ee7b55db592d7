// `covey draw`: exact draws from the posterior restricted to DAGs whose moral graph has a vertex
// cover of size <= k, with the total weight Z_k of that class and edge probabilities.
#include <algorithm>
#include <iomanip>
#include <iostream>

#include "command.hpp"
#include "common.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"
#include "covey/core/version.hpp"
#include "covey/exact/cover_draws.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "covey/graph/features.hpp"
#include "covey/scores/score_io.hpp"

namespace covey::cli {
namespace {

struct DrawOptions {
  std::string scores, output, save_sampler, sampler, memory_limit;
  int cover = 0;
  std::size_t count = 0;
  std::uint64_t seed = 1;
  bool json = false, force = false;
  int threads = 0;
};

void run_draw(const DrawOptions& o) {
  const auto threads = apply_threads(o.threads);
  const std::uint64_t limit = memory_limit(o.memory_limit);
  const ScoreTable table = load_scores(o.scores);
  // The inputs read: refuse a bad or existing output path before the long work (the writers
  // check again).
  for (const std::string& path : {o.output, o.save_sampler})
    if (!path.empty()) require_new_output(path, o.force);
  require_draws_memory(static_cast<double>(o.count), table.num_variables(), "--draws", limit);
  CoverSampler sampler;
  CoverSamplerOptions options;
  options.memory_limit_bytes = limit;
  if (!o.sampler.empty()) {
    sampler = CoverSampler::load(o.sampler, table, options);
    if (sampler.cover_bound() != o.cover)
      throw InputError("--sampler " + o.sampler + ": built for cover bound " +
                       std::to_string(sampler.cover_bound()) + ", not --cover " +
                       std::to_string(o.cover));
  } else {
    sampler = CoverSampler::build(table, o.cover, options);
  }
  if (!o.save_sampler.empty()) sampler.save(o.save_sampler, o.force);

  CoverDrawBatch batch = draw_cover_batch(sampler, o.seed, o.count, true, limit);
  const auto estimate = estimate_log_total_weight(sampler.log_upper_bound(), o.count, batch.trials);
  const auto edges = edge_frequencies(batch.dags, table.num_variables());
  const double acceptance = double(o.count) / double(batch.trials);

  if (!o.output.empty()) {
    CoverDrawsFile file;
    file.variables = variable_names(table.variables());
    file.cover_bound = o.cover;
    file.seed = o.seed;
    file.trials = batch.trials;
    file.log_upper_bound = sampler.log_upper_bound();
    file.total_weight = estimate;
    file.table_fingerprint = table.fingerprint();
    file.command_line = command_line();
    file.covey_version = kVersion;
    for (const Dag& d : batch.dags) file.log_weights.push_back(log_weight(table, d));
    file.dags = std::move(batch.dags);  // not needed below: the edges are counted already
    write_cover_draws(o.output, file, o.force);
  }

  if (o.json) {
    nlohmann::json e = nlohmann::json::array();
    for (const auto& f : edges)
      e.push_back({{"from", table.name(f.from)},
                   {"to", table.name(f.to)},
                   {"probability", f.probability},
                   {"se", f.se}});
    print_json({{"count", o.count},
                {"trials", batch.trials},
                {"acceptance_rate", acceptance},
                {"log_upper_bound", sampler.log_upper_bound()},
                {"log_total_weight", estimate.log_estimate},
                {"log_total_weight_ci95", {estimate.log_lo, estimate.log_hi}},
                {"clamped_splits", sampler.clamped_splits()},
                {"edges", e},
                {"splits", sampler.num_splits()}});
    return;
  }
  std::cout << std::setprecision(10) << "exact draws, moral-graph vertex cover <= " << o.cover
            << " (" << o.scores << ", seed " << o.seed << ")\n"
            << "splits: " << sampler.num_splits() << " candidate (C, L) pairs over "
            << sampler.num_cover_sets() << " cover sets (" << sampler.num_units()
            << " sampling units); clamped split weights: " << sampler.clamped_splits() << "\n"
            << "log U: " << sampler.log_upper_bound() << "\n"
            << "draws: " << o.count << " accepted of " << batch.trials
            << " trials (acceptance rate " << std::setprecision(6) << acceptance << ")\n"
            << std::setprecision(10) << "log Z_k: " << estimate.log_estimate << "  (95% interval "
            << estimate.log_lo << " .. " << estimate.log_hi << ")\n";
  std::vector<EdgeFrequency> shown;
  for (const auto& f : edges)
    if (f.probability > 0) shown.push_back(f);
  std::stable_sort(shown.begin(), shown.end(),
                   [](const auto& a, const auto& b) { return a.probability > b.probability; });
  // Edges are named as every command names them (feature_label).
  const std::vector<std::string> names = variable_names(table.variables());
  std::cout << "edge probabilities (edges never drawn are omitted):\n"
            << "  probability  se        edge\n";
  for (const auto& f : shown)
    std::cout << "  " << format_number("%-11.6f", f.probability) << "  "
              << format_number("%-8.6f", f.se) << "  "
              << feature_label(FeatureId{FeatureKind::kEdge, f.from, f.to}, names) << '\n';
  if (!o.output.empty()) std::cout << "draws written to " << o.output << "\n";
}

void setup_draw(CLI::App& app) {
  auto* cmd = app.add_subcommand(
      "draw",
      "Exact draws from the posterior over DAGs whose moral graph has a vertex cover of size "
      "<= k, with the total weight of that class and edge probabilities");
  auto o = std::make_shared<DrawOptions>();
  cmd->add_option("SCORES", o->scores, "score table (HDF5 or .tsv)")->required();
  cmd->add_option("--cover", o->cover,
                  "cover bound k (0 <= k < number of variables): draw DAGs whose moral graph "
                  "has a vertex cover of at most k vertices")
      ->required();
  cmd->add_option("--draws", o->count, "number of exact draws (e.g. 100000 or 1e5)")
      ->required()
      ->transform(kCount)
      ->check(kPositive);
  add_seed_option(*cmd, o->seed, "the draws");
  cmd->add_option("-o,--output", o->output,
                  "HDF5 file for the draws (see docs/file-formats.md; default: not written)");
  cmd->add_flag("--json", o->json, "Print JSON");
  cmd->add_option("--save-sampler", o->save_sampler,
                  "save the preprocessed sampler to this HDF5 file for later runs (default: not "
                  "saved)");
  cmd->add_option("--sampler", o->sampler,
                  "use a sampler saved by --save-sampler (must match SCORES and --cover; "
                  "default: build it)")
      ->check(CLI::ExistingFile);
  add_memory_limit_option(*cmd, o->memory_limit);
  add_threads_option(*cmd, o->threads);
  add_force_option(*cmd, o->force);
  cmd->callback([o] { run_draw(*o); });
}

const Registration draw_registration(31, setup_draw);

}  // namespace
}  // namespace covey::cli
