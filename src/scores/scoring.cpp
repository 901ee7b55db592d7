// From a local score to a ScoreTable: candidate parents, background knowledge, the memory check,
// and parallel scoring that gives the same bits for any number of threads (each parent set is
// scored by one fixed sequential computation; results are gathered in a fixed order).
#include <tbb/parallel_for.h>
#include <tbb/task_arena.h>
#include <algorithm>
#include <atomic>
#include <bit>
#include <cmath>
#include <cstdio>
#include <mutex>
#include <numeric>

#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"
#include "covey/core/version.hpp"
#include "covey/scores/scores.hpp"

namespace covey {

void LocalScore::score_family(const Family& f,
                              std::vector<std::pair<ParentMask, double>>& out) const {
  std::vector<int> parents(f.required.begin(), f.required.end());
  if (f.first_optional < 0) {
    out.emplace_back(0, log_marginal(f.node, parents));
    return;
  }
  const int m = static_cast<int>(f.optional.size());
  // Depth-first, each set before its supersets (the order BDeu's walk uses too).
  auto visit = [&](auto&& self, ParentMask mask, int start, int used) -> void {
    for (int j = start; j < m && used < f.max_optional; ++j) {
      parents.push_back(f.optional[j]);
      const ParentMask with = mask | (ParentMask{1} << j);
      out.emplace_back(with, log_marginal(f.node, parents));
      self(self, with, j + 1, used + 1);
      parents.pop_back();
    }
  };
  const int j = f.first_optional;
  if (f.max_optional < 1) return;
  parents.push_back(f.optional[j]);
  out.emplace_back(ParentMask{1} << j, log_marginal(f.node, parents));
  visit(visit, ParentMask{1} << j, j + 1, 1);
}

namespace {

// Sum_{k=0..max_k} C(m, k), in floating point (only compared against limits).
double count_subsets(int m, int max_k) {
  double total = 0, binom = 1;
  for (int k = 0; k <= std::min(m, max_k); ++k) {
    total += binom;
    binom = binom * (m - k) / (k + 1);
  }
  return total;
}

// What background knowledge and the candidate rule leave for each node.
struct NodePlan {
  std::vector<int> required;  // sorted
  std::vector<int> eligible;  // neither v nor forbidden nor required, ascending
  int optional_count = 0;     // how many of `eligible` become candidates
};

int candidate_rule(const ScoreOptions& o, int n) {
  if (o.candidates == kDefaultCandidates) return n <= kNoScreenUpTo ? n : kDefaultCandidateCount;
  if (o.candidates < 1 || o.candidates > kMaxCandidates)
    throw OptionError("{candidates} must be between 1 and " + std::to_string(kMaxCandidates));
  return o.candidates;
}

std::vector<NodePlan> plan_nodes(const std::vector<Variable>& variables, const ScoreOptions& o) {
  const int n = static_cast<int>(variables.size());
  if (o.max_indegree < 0) throw OptionError("{max_indegree} must be 0 or more");
  if (!std::isfinite(o.edge_penalty)) throw OptionError("{edge_penalty} must be a finite number");
  check_edge_constraints(o.constraints, variables);
  const int limit = candidate_rule(o, n);
  std::vector<std::vector<char>> excluded(n, std::vector<char>(n, 0));
  std::vector<NodePlan> plans(n);
  for (const Edge& e : o.constraints.forbidden) excluded[e.to][e.from] = 1;
  for (const Edge& e : o.constraints.required) {
    excluded[e.to][e.from] = 1;
    plans[e.to].required.push_back(e.from);
  }
  for (int v = 0; v < n; ++v) {
    NodePlan& p = plans[v];
    std::sort(p.required.begin(), p.required.end());
    if (static_cast<int>(p.required.size()) > o.max_indegree)
      throw OptionError("node '" + variables[v].name + "' has " +
                        std::to_string(p.required.size()) +
                        " required parents ({require}), more than {max_indegree} " +
                        std::to_string(o.max_indegree));
    for (int u = 0; u < n; ++u)
      if (u != v && !excluded[v][u]) p.eligible.push_back(u);
    const int room = std::max(0, limit - static_cast<int>(p.required.size()));
    p.optional_count = std::min(static_cast<int>(p.eligible.size()), room);
    if (p.optional_count + static_cast<int>(p.required.size()) > kMaxCandidates)
      throw OptionError("node '" + variables[v].name + "' would have " +
                        std::to_string(p.optional_count + p.required.size()) +
                        " candidate parents; at most " + std::to_string(kMaxCandidates) +
                        " (use {candidates})");
  }
  return plans;
}

double sets_of(const NodePlan& p, int max_indegree) {
  return count_subsets(p.optional_count, max_indegree - static_cast<int>(p.required.size()));
}

ScoreEstimate estimate_from_plans(const std::vector<NodePlan>& plans, std::size_t rows,
                                  const ScoreOptions& o) {
  ScoreEstimate e;
  for (const NodePlan& p : plans) e.parent_sets += sets_of(p, o.max_indegree);
  const double n = static_cast<double>(plans.size());
  const double threads = tbb::this_task_arena::max_concurrency();
  // The table (ScoreTable::estimate_bytes) + the per-node lists it is built from (mask + score
  // per set) + each thread's working codes (one array of rows per depth, and the counts) + the
  // candidate screen (one score per pair).
  const double per_set = sizeof(ParentMask) + sizeof(double);
  const double table = static_cast<double>(ScoreTable::estimate_bytes(static_cast<int>(n), 0)) +
                       e.parent_sets * static_cast<double>(ScoreTable::estimate_bytes(0, 1));
  const double workspace = threads * (4.0 * static_cast<double>(rows) * (o.max_indegree + 4) +
                                      4.0 * static_cast<double>(bdeu_count_cells(rows)));
  e.bytes = table + per_set * e.parent_sets + workspace + 8 * n * n;
  return e;
}

std::string candidate_text(const ScoreOptions& o, int n) {
  if (o.candidates != kDefaultCandidates) return std::to_string(o.candidates);
  return n <= kNoScreenUpTo ? "all, the default for n <= 20" : "20, the default";
}

}  // namespace

ScoreEstimate estimate_scoring(const std::vector<Variable>& variables, std::size_t rows,
                               const ScoreOptions& options) {
  return estimate_from_plans(plan_nodes(variables, options), rows, options);
}

namespace {

std::vector<std::vector<int>> candidates_from_plans(const LocalScore& score,
                                                    const std::vector<NodePlan>& plans) {
  const int n = static_cast<int>(plans.size());
  std::vector<std::vector<int>> out(n);
  tbb::parallel_for(0, n, [&](int v) {
    const NodePlan& p = plans[v];
    std::vector<int> chosen = p.eligible;
    if (p.optional_count < static_cast<int>(p.eligible.size())) {
      // Pairwise screen: gain of u as the only parent.
      const double base = score.log_marginal(v, {});
      std::vector<double> gain(n, 0.0);
      for (int u : p.eligible) {
        const int one[1] = {u};
        gain[u] = score.log_marginal(v, one) - base;
      }
      std::stable_sort(chosen.begin(), chosen.end(),
                       [&](int a, int b) { return gain[a] > gain[b]; });
      chosen.resize(p.optional_count);
    }
    chosen.insert(chosen.end(), p.required.begin(), p.required.end());
    std::sort(chosen.begin(), chosen.end());
    out[v] = std::move(chosen);
  });
  return out;
}

}  // namespace

std::vector<std::vector<int>> choose_candidates(const LocalScore& score,
                                                const std::vector<Variable>& variables,
                                                const ScoreOptions& options) {
  return candidates_from_plans(score, plan_nodes(variables, options));
}

ScoreTable compute_scores(const LocalScore& score, const std::vector<Variable>& variables,
                          std::size_t rows, const ScoreOptions& o, ScoreMetadata metadata) {
  const int n = static_cast<int>(variables.size());
  if (score.num_variables() != n) throw Error("compute_scores: score and variables differ");
  const std::vector<NodePlan> plans = plan_nodes(variables, o);

  // Memory check before anything large is allocated.
  const ScoreEstimate estimate = estimate_from_plans(plans, rows, o);
  const std::uint64_t limit = o.memory_limit ? o.memory_limit : default_memory_limit();
  bool too_many_per_node = false;
  for (const NodePlan& p : plans) too_many_per_node |= sets_of(p, o.max_indegree) > 2.0e9;
  if (estimate.bytes > static_cast<double>(limit) || too_many_per_node) {
    char sets[32];
    std::snprintf(sets, sizeof sets, "%.4g", estimate.parent_sets);
    throw ResourceError(
        "scoring needs an estimated " + format_bytes(estimate.bytes) + " for " + sets +
        " parent sets, more than the memory limit of " + format_bytes(static_cast<double>(limit)) +
        " ({memory_limit}); lower {max_indegree} (now " + std::to_string(o.max_indegree) +
        ") or {candidates} (now " + candidate_text(o, n) + "), or raise {memory_limit}");
  }

  const std::vector<std::vector<int>> candidates = candidates_from_plans(score, plans);

  // Tasks: per node, the required set alone and one task per lowest optional parent.
  struct Task {
    int node;
    int first;  // -1: the required set alone
    double size;
  };
  std::vector<std::vector<int>> optional(n);
  std::vector<Task> tasks;
  double total = 0;
  for (int v = 0; v < n; ++v) {
    const NodePlan& p = plans[v];
    for (int u : candidates[v])
      if (!std::binary_search(p.required.begin(), p.required.end(), u)) optional[v].push_back(u);
    const int m = static_cast<int>(optional[v].size());
    const int max_optional = o.max_indegree - static_cast<int>(p.required.size());
    tasks.push_back({v, -1, 1});
    if (max_optional >= 1)
      for (int i = 0; i < m; ++i)
        tasks.push_back({v, i, count_subsets(m - 1 - i, max_optional - 1)});
    total += count_subsets(m, max_optional);
  }
  // Largest tasks first for balance; results are stored by task index, so order is irrelevant.
  std::vector<std::size_t> schedule(tasks.size());
  std::iota(schedule.begin(), schedule.end(), 0);
  std::stable_sort(schedule.begin(), schedule.end(),
                   [&](std::size_t a, std::size_t b) { return tasks[a].size > tasks[b].size; });

  std::vector<std::vector<std::pair<ParentMask, double>>> results(tasks.size());
  std::atomic<std::size_t> done{0};
  std::mutex progress_mutex;
  const std::size_t total_sets = static_cast<std::size_t>(total);
  tbb::parallel_for(tbb::blocked_range<std::size_t>(0, schedule.size(), 1),
                    [&](const tbb::blocked_range<std::size_t>& range) {
                      for (std::size_t s = range.begin(); s != range.end(); ++s) {
                        const Task& t = tasks[schedule[s]];
                        const NodePlan& p = plans[t.node];
                        const LocalScore::Family family{
                            t.node, p.required, optional[t.node],
                            o.max_indegree - static_cast<int>(p.required.size()), t.first};
                        auto& out = results[schedule[s]];
                        out.reserve(static_cast<std::size_t>(t.size));
                        score.score_family(family, out);
                        const std::size_t now = done += out.size();
                        if (o.progress && progress_mutex.try_lock()) {
                          o.progress(now, total_sets);
                          progress_mutex.unlock();
                        }
                      }
                    });

  // Gather per node in task order, folding in the structure prior.
  std::vector<double> log_prior(o.max_indegree + 1);
  for (int k = 0; k <= o.max_indegree; ++k)
    log_prior[k] = log_structure_prior(o.prior, o.edge_penalty, n, k);
  std::vector<NodeScores> nodes(n);
  std::size_t task = 0;
  for (int v = 0; v < n; ++v) {
    NodeScores& node = nodes[v];
    node.candidates = candidates[v];
    std::vector<int> position(n, -1);
    for (std::size_t i = 0; i < node.candidates.size(); ++i) position[node.candidates[i]] = int(i);
    ParentMask required_mask = 0;
    for (int u : plans[v].required) required_mask |= ParentMask{1} << position[u];
    std::vector<ParentMask> optional_bit;
    for (int u : optional[v]) optional_bit.push_back(ParentMask{1} << position[u]);
    const int required_count = std::popcount(required_mask);
    for (; task < tasks.size() && tasks[task].node == v; ++task) {
      auto& out = results[task];
      for (const auto& [opt_mask, log_marginal] : out) {
        ParentMask local = required_mask;
        for (ParentMask m = opt_mask; m; m &= m - 1) local |= optional_bit[std::countr_zero(m)];
        node.masks.push_back(local);
        node.log_scores.push_back(log_marginal +
                                  log_prior[required_count + std::popcount(opt_mask)]);
      }
      std::vector<std::pair<ParentMask, double>>().swap(out);
    }
  }
  if (o.progress) o.progress(total_sets, total_sets);

  Attributes& params = metadata.parameters;
  if (o.prior == PriorKind::kEdgePenalty) params["edge_penalty"] = o.edge_penalty;
  if (o.candidates == kDefaultCandidates && n <= kNoScreenUpTo)
    params["candidates"] = std::string("all");
  else
    params["candidates"] = static_cast<long long>(candidate_rule(o, n));
  params["forbidden_edges"] = static_cast<long long>(o.constraints.forbidden.size());
  params["required_edges"] = static_cast<long long>(o.constraints.required.size());
  metadata.prior = to_string(o.prior);
  metadata.max_indegree = o.max_indegree;
  metadata.num_rows = static_cast<long long>(rows);
  if (metadata.covey_version.empty()) metadata.covey_version = kVersion;
  return ScoreTable(variables, std::move(nodes), std::move(metadata));
}

ScoreTable score_data(const DataTable& data, const ScoreOptions& options) {
  ScoreMetadata meta;
  meta.source = data.source();
  std::unique_ptr<LocalScore> score;
  auto bge_parameters = [&] {
    const int n = static_cast<int>(
        std::count_if(data.variables().begin(), data.variables().end(),
                      [](const Variable& v) { return v.kind == VariableKind::kGaussian; }));
    meta.parameters["alpha_mu"] = options.bge.alpha_mu;
    meta.parameters["alpha_w"] = bge_alpha_w(options.bge, n);
    meta.parameters["t"] = bge_t(options.bge, n);
    meta.parameters["standardized"] = options.bge.standardize;
  };
  ScoreOptions scoring = options;
  if (data.is_mixed()) {
    score = make_conditional_gaussian(data, options.equivalent_sample_size, options.bge);
    meta.score = "cg";
    meta.parameters["equivalent_sample_size"] = options.equivalent_sample_size;
    bge_parameters();
    scoring.constraints = with_discrete_before_gaussian(options.constraints, data.variables());
  } else if (data.kind() == VariableKind::kDiscrete) {
    score = make_bdeu(data, options.equivalent_sample_size);
    meta.score = "bdeu";
    meta.parameters["equivalent_sample_size"] = options.equivalent_sample_size;
  } else {
    score = make_bge(data, options.bge);
    meta.score = "bge";
    bge_parameters();
  }
  meta.parameters["rows_dropped"] = static_cast<long long>(data.rows_dropped());
  const std::vector<std::string>& origins = data.column_origins();
  for (std::size_t v = 0; v < origins.size(); ++v)
    meta.parameters["column:" + data.name(static_cast<int>(v))] = origins[v];
  return compute_scores(*score, data.variables(), data.num_rows(), scoring, std::move(meta));
}

void check_score_parameters(const ScoreParametersGiven& given, const ScoreOptions& options,
                            const DataTable& data, const std::string& data_name) {
  if (given.edge_penalty && options.prior != PriorKind::kEdgePenalty)
    throw OptionError("{edge_penalty} needs {prior} edge-penalty");
  if (data.is_mixed()) return;
  const bool discrete = data.kind() == VariableKind::kDiscrete;
  const std::pair<bool, const char*> gaussian_only[] = {{given.bge_alpha_mu, "bge_alpha_mu"},
                                                        {given.bge_alpha_w, "bge_alpha_w"},
                                                        {given.raw_units, "raw_units"}};
  for (const auto& [set, field] : gaussian_only)
    if (discrete && set)
      throw OptionError("{" + std::string(field) + "} applies to Gaussian data (BGe), but " +
                        data_name + " is discrete");
  if (!discrete && given.equivalent_sample_size)
    throw OptionError("{equivalent_sample_size} applies to discrete data (BDeu), but " + data_name +
                      " is Gaussian");
}

}  // namespace covey
