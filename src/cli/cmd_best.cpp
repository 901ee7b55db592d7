// `covey best`: the highest-scoring DAG whose moral graph has a vertex cover of size <= k.
#include <bit>
#include <iomanip>
#include <iostream>

#include "command.hpp"
#include "common.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/exact/cover_best.hpp"
#include "covey/scores/score_io.hpp"

namespace covey::cli {
namespace {

std::vector<std::string> names_of(const ScoreTable& table, const std::vector<int>& vertices) {
  std::vector<std::string> out;
  for (int v : vertices) out.push_back(table.name(v));
  return out;
}

struct BestOptions {
  std::string scores, dot;
  int cover = 0;
  bool json = false, force = false;
  int threads = 0;
};

void setup_best(CLI::App& app) {
  auto* cmd = app.add_subcommand(
      "best", "The highest-scoring DAG whose moral graph has a vertex cover of size <= k");
  auto o = std::make_shared<BestOptions>();
  cmd->add_option("SCORES", o->scores, "score table (HDF5 or .tsv)")->required();
  cmd->add_option("--cover", o->cover,
                  "cover bound k (0 <= k < number of variables): the moral graph of the DAG "
                  "must have a vertex cover of at most k vertices")
      ->required();
  cmd->add_flag("--json", o->json, "Print JSON: log_score, cover, parents");
  cmd->add_option("--dot", o->dot,
                  "Also write the DAG as Graphviz DOT to this file (default: not written)");
  add_threads_option(*cmd, o->threads);
  add_force_option(*cmd, o->force);
  cmd->callback([o] {
    const auto threads = apply_threads(o->threads);
    const ScoreTable table = load_scores(o->scores);
    // The table read: refuse an existing file before the search.
    if (!o->dot.empty()) require_new_output(o->dot, o->force);
    const CoverBestResult best = best_dag_in_cover_class(table, o->cover);
    if (!o->dot.empty())
      write_text_file_atomically(o->dot, to_dot(best.dag, table.variables(), "best"));
    if (o->json) {
      nlohmann::json parents = nlohmann::json::object();
      for (int v = 0; v < table.num_variables(); ++v)
        parents[table.name(v)] = names_of(table, best.dag.parents_of(v));
      print_json({{"log_score", best.log_score},
                  {"cover", names_of(table, best.cover)},
                  {"parents", parents}});
      return;
    }
    std::cout << "best DAG with a moral-graph vertex cover of size <= " << o->cover << " ("
              << o->scores << ")\n"
              << "log score: " << std::setprecision(12) << best.log_score << "\n"
              << "cover:";
    for (const auto& name : names_of(table, best.cover)) std::cout << ' ' << name;
    std::cout << "\nparents:\n";
    for (int v = 0; v < table.num_variables(); ++v) {
      std::cout << "  " << table.name(v) << " <-";
      const auto ps = names_of(table, best.dag.parents_of(v));
      if (ps.empty()) std::cout << " (none)";
      for (const auto& p : ps) std::cout << ' ' << p;
      std::cout << '\n';
    }
  });
}

const Registration best_registration(30, setup_best);

}  // namespace
}  // namespace covey::cli
