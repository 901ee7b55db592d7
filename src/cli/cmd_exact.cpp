// `covey exact`: the exact posterior over all DAGs of a small score table -- total weight,
// edge, adjacency and ancestor probabilities, exact independent draws (docs/exact-engine.md).
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <iostream>
#include <optional>

#include "command.hpp"
#include "common.hpp"
#include "covey/chains/chain_runner.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/logmath.hpp"
#include "covey/core/memory.hpp"
#include "covey/exact/exact_posterior.hpp"
#include "covey/graph/features.hpp"
#include "covey/scores/score_io.hpp"

namespace covey::cli {
namespace {

struct ExactArgs {
  std::string scores;
  std::string output;
  std::string route = "auto";
  bool json = false, force = false;
  std::size_t draws = 0;
  std::uint64_t seed = 1;
  int threads = 0;
  std::string memory_limit;  // --memory-limit; empty: default_memory_limit()
  std::string max_time = "1h";
  std::size_t top = 20;
  int cover = -1;  // -1: no cover bound
  std::size_t cover_draws = 20000;
};

struct Feature {
  FeatureKind kind;
  int from, to;
  double probability;
};

std::vector<Feature> edges_of(const ExactPosterior& p) {
  std::vector<Feature> out;
  for (int u = 0; u < p.num_variables; ++u)
    for (int v = 0; v < p.num_variables; ++v)
      if (u != v) out.push_back({FeatureKind::kEdge, u, v, p.edge(u, v)});
  return out;
}

std::vector<Feature> adjacencies_of(const ExactPosterior& p) {
  std::vector<Feature> out;
  for (int u = 0; u < p.num_variables; ++u)
    for (int v = u + 1; v < p.num_variables; ++v)
      out.push_back({FeatureKind::kAdjacency, u, v, p.adjacency(u, v)});
  return out;
}

std::vector<Feature> ancestors_of(const ExactPosterior& p) {
  std::vector<Feature> out;
  for (int u = 0; u < p.num_variables; ++u)
    for (int v = 0; v < p.num_variables; ++v)
      if (u != v) out.push_back({FeatureKind::kAncestor, u, v, p.ancestor(u, v)});
  return out;
}

nlohmann::json to_json(const std::vector<Feature>& features, const ScoreTable& table) {
  nlohmann::json list = nlohmann::json::array();
  for (const Feature& f : features)
    list.push_back(
        {{"from", table.name(f.from)}, {"to", table.name(f.to)}, {"probability", f.probability}});
  return list;
}

// Features are named as every command names them (feature_label).
void print_top(const std::string& title, std::vector<Feature> features, const ScoreTable& table,
               std::size_t top) {
  std::stable_sort(features.begin(), features.end(), [](const Feature& a, const Feature& b) {
    return a.probability > b.probability;
  });
  const std::size_t shown = top == 0 ? features.size() : std::min(features.size(), top);
  const std::vector<std::string> names = variable_names(table.variables());
  std::cout << title << " (top " << shown << " of " << features.size() << " by probability):\n";
  for (std::size_t i = 0; i < shown; ++i) {
    char prob[32];
    std::snprintf(prob, sizeof prob, "%.6f", features[i].probability);
    const Feature& f = features[i];
    std::cout << "  " << prob << "  " << feature_label(FeatureId{f.kind, f.from, f.to}, names)
              << '\n';
  }
}

ExactLimits limits_of(const ExactArgs& a) {
  ExactLimits limits;
  limits.max_bytes = memory_limit(a.memory_limit);
  limits.max_seconds = parse_duration(a.max_time, "--max-time");
  return limits;
}

void run_exact(const ExactArgs& a) {
  // Option combinations first: a mistake costs nothing and touches no file.
  if (a.draws > 0 && a.output.empty())
    throw InputError("--draws needs -o/--output, the HDF5 file to write the draws to");
  if (!a.output.empty() && a.draws == 0)
    throw InputError("-o/--output needs --draws N, the number of exact draws to write");
  ExactOptions options;
  options.route = exact_route_from_string(a.route);
  options.limits = limits_of(a);
  const auto thread_limit = apply_threads(a.threads);

  const ScoreTable table = load_scores(a.scores);
  // The table read: an existing file is refused before the work (write_exact_draws checks again).
  if (!a.output.empty()) require_new_output(a.output, a.force);
  // The mass of D_k is enumerated for small n and otherwise estimated from exact draws: the
  // written ones, or --cover-draws of them when none are written.
  const bool cover_from_draws = a.cover >= 0 && table.num_variables() > kCoverMassEnumerationMax;
  options.draws = a.draws > 0 || cover_from_draws;
  if (a.draws > 0)
    require_draws_memory(static_cast<double>(a.draws), table.num_variables(), "--draws",
                         options.limits.max_bytes);
  else if (cover_from_draws)
    require_draws_memory(static_cast<double>(a.cover_draws), table.num_variables(), "--cover-draws",
                         options.limits.max_bytes);
  const ExactEngine engine(table, options);
  const ExactPosterior& post = engine.posterior();

  std::vector<Dag> dags;
  if (a.draws > 0)
    dags = engine.draw_many(a.draws, a.seed);
  else if (cover_from_draws)
    dags = engine.draw_many(a.cover_draws, a.seed);
  std::optional<ClassMass> cover_mass;
  if (a.cover >= 0) {
    cover_mass = cover_class_mass(table, a.cover, dags);
    // No exact draw inside D_k: the mass is below 1/draws, so take it as Z_k / Z from the
    // cover engine, which stays finite however small it is.
    if (cover_mass->method == "exact-draws" && cover_mass->inside == 0)
      cover_mass = cover_class_mass_from_weights(table, a.cover, post.log_total_weight, a.seed,
                                                 2000, memory_limit(a.memory_limit));
  }

  if (a.draws > 0)
    write_exact_draws(a.output, table, engine, dags, a.seed, command_line(), a.force);

  if (a.json) {
    nlohmann::json out;
    out["file"] = a.scores;
    out["num_variables"] = table.num_variables();
    out["variables"] = variable_names(table.variables());
    out["log_total_weight"] = post.log_total_weight;
    out["route"] = to_string(engine.plan().route);
    out["discrepancy"] = post.discrepancy;
    out["clamped_sums"] = post.clamped;
    out["estimate"] = {{"seconds", engine.plan().seconds},
                       {"bytes", static_cast<unsigned long long>(engine.plan().bytes)}};
    out["edges"] = to_json(edges_of(post), table);
    out["adjacencies"] = to_json(adjacencies_of(post), table);
    out["ancestors"] = to_json(ancestors_of(post), table);
    if (a.draws > 0)
      out["draws"] = {{"file", a.output},
                      {"count", static_cast<unsigned long long>(a.draws)},
                      {"seed", static_cast<unsigned long long>(a.seed)}};
    if (cover_mass) {
      const ClassMass& m = *cover_mass;
      out["mass_in_cover_class"] = {{"cover_bound", a.cover},
                                    {"estimate", m.estimate},
                                    {"ci95", {m.lo, m.hi}},
                                    {"method", m.method},
                                    {"draws", static_cast<unsigned long long>(m.draws)},
                                    {"inside", static_cast<unsigned long long>(m.inside)},
                                    {"log10_estimate", m.log_estimate / std::log(10.0)}};
      // log Z_k = log Z + log P(D_k | data); null when no DAG of the class has weight.
      auto log_weight = [&](double log_mass) -> nlohmann::json {
        if (!(log_mass > kNegInf)) return nullptr;
        return post.log_total_weight + log_mass;
      };
      out["log_cover_weight"] = log_weight(m.log_estimate);
      out["log_cover_weight_ci95"] = {log_weight(m.log_lo), log_weight(m.log_hi)};
    }
    print_json(out);
    return;
  }
  char line[160];
  std::snprintf(line, sizeof line, "%.10g", post.log_total_weight);
  std::cout << a.scores << ": " << table.num_variables() << " variables, exact over all DAGs of "
            << "the table (" << to_string(engine.plan().route) << " route)\n"
            << "log total weight (log Z): " << line << '\n';
  std::snprintf(line, sizeof line, "%.2g", post.discrepancy);
  std::cout << "numerical discrepancy between independent evaluations: " << line << '\n';
  print_top("edges", edges_of(post), table, a.top);
  print_top("adjacencies", adjacencies_of(post), table, a.top);
  print_top("ancestor relations", ancestors_of(post), table, a.top);
  if (a.draws > 0)
    std::cout << a.draws << " exact draws (seed " << a.seed << ") written to " << a.output << '\n';
  if (cover_mass) {
    const ClassMass& m = *cover_mass;
    char text[400];
    const std::string estimate = format_probability(m.estimate, m.log_estimate);
    const std::string lo = format_probability(m.lo, m.log_lo);
    const std::string hi = format_probability(m.hi, m.log_hi);
    if (m.method == "enumeration")
      std::snprintf(text, sizeof text, "%s (exact, by enumeration)", estimate.c_str());
    else if (m.method == "cover-engine")
      std::snprintf(text, sizeof text,
                    "%s (95%% interval %s to %s, Z_k / Z from %zu exact draws of D_%d in %zu "
                    "trials; none of the exact draws over all DAGs was inside)",
                    estimate.c_str(), lo.c_str(), hi.c_str(), m.inside, a.cover, m.draws);
    else
      std::snprintf(text, sizeof text, "%s (95%% interval %s to %s, %zu of %zu exact draws)",
                    estimate.c_str(), lo.c_str(), hi.c_str(), m.inside, m.draws);
    std::cout << "posterior mass of D_" << a.cover << " (moral graph cover <= " << a.cover
              << "): " << text << '\n';
    if (m.log_estimate > kNegInf) {
      std::snprintf(text, sizeof text, "%.10g", post.log_total_weight + m.log_estimate);
      std::cout << "log total weight of D_" << a.cover << " (log Z_k = log Z + log mass): " << text
                << '\n';
    }
  }
}

void setup_exact(CLI::App& app) {
  auto* cmd = app.add_subcommand(
      "exact", "Exact posterior over all DAGs of a small table: edges, ancestors, exact draws");
  auto args = std::make_shared<ExactArgs>();
  cmd->add_option("SCORES", args->scores, "score table (HDF5 or .tsv)")->required();
  cmd->add_flag("--json", args->json, "Print JSON");
  cmd->add_option("--draws", args->draws,
                  "number of exact independent draws to write, e.g. 100000 or 1e5 (needs -o; "
                  "default: none)")
      ->transform(kCount)
      ->check(kPositive);
  add_seed_option(*cmd, args->seed, "the draws");
  cmd->add_option("-o,--output", args->output,
                  "HDF5 file for the draws (kind exact-draws; default: not written)");
  cmd->add_option("--route", args->route,
                  "auto, layered (positive sums; draws) or signed (inclusion-exclusion, less "
                  "memory)")
      ->capture_default_str();
  add_memory_limit_option(*cmd, args->memory_limit);
  add_max_time_option(*cmd, args->max_time,
                      "Refuse when the estimated single-core time exceeds this");
  add_top_option(*cmd, args->top);
  cmd->add_option("--cover", args->cover,
                  "Also the posterior mass of D_k (moral graph vertex cover <= k) and log Z_k "
                  "(default: none)")
      ->check(kNonNegative);
  cmd->add_option("--cover-draws", args->cover_draws,
                  "Exact draws that estimate the mass of D_k above 6 variables when --draws is "
                  "not given")
      ->transform(kCount)
      ->check(kPositive)
      ->capture_default_str();
  add_threads_option(*cmd, args->threads);
  add_force_option(*cmd, args->force);
  cmd->callback([args] { run_exact(*args); });
}

const Registration exact_registration(40, setup_exact);

}  // namespace
}  // namespace covey::cli
