#include "covey/report/run_report.hpp"

#include <cmath>
#include <cstdio>
#include <numeric>
#include <optional>
#include <span>
#include <string>

#include "covey/analysis/check.hpp"
#include "covey/chains/structure_chain.hpp"
#include "covey/core/error.hpp"

namespace covey {

namespace {

RunFacts run_facts(const std::vector<ChainRun>& runs, const RunDiagnostics& d) {
  RunFacts facts;
  facts.chains = d.chains;
  facts.draws_per_chain = d.iterations;
  facts.steps_per_chain = static_cast<std::int64_t>(runs.front().steps());
  MoveCounts total;
  std::int64_t regenerations = 0;
  bool teleports = false;
  for (const ChainRun& run : runs) {
    for (int c = 0; c < run.num_chains(); ++c) {
      const ChainCheckpoint cp = run.checkpoint(c);
      total += cp.counts;
      regenerations += static_cast<std::int64_t>(cp.regenerations);
    }
    teleports = teleports || run.options().teleport_rate > 0;
  }
  for (int m = 0; m < kNumMoves; ++m) {
    if (total.proposed[m] == 0) continue;
    facts.acceptance.push_back({move_name(m), static_cast<std::int64_t>(total.proposed[m]),
                                static_cast<std::int64_t>(total.accepted[m])});
  }
  facts.regenerations = teleports ? regenerations : -1;
  double seconds = 0;
  for (const ChainRun& run : runs) seconds += run.elapsed_seconds();
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.1f s", seconds);
  facts.extra.push_back({"sampling time (all files)", buffer});
  facts.extra.push_back({"run files", std::to_string(runs.size())});
  const auto& o = runs.front().options();
  // The options that shaped the draws, in words; classes and moves that were off are left out.
  auto number = [](double x) {
    char text[32];
    std::snprintf(text, sizeof text, "%.4g", x);
    return std::string(text);
  };
  facts.extra.push_back({"thin", std::to_string(o.thin)});
  facts.extra.push_back({"burn-in", std::to_string(o.burn_in)});
  facts.extra.push_back({"seed", std::to_string(o.seed)});
  facts.extra.push_back({"start", o.start});
  facts.extra.push_back({"REV rate", number(o.rev_rate)});
  if (o.block_size > 0 && o.block_rate > 0)
    facts.extra.push_back(
        {"block moves", std::to_string(o.block_size) + " nodes at rate " + number(o.block_rate)});
  if (o.teleport_cover >= 0)
    facts.extra.push_back({"teleports", "from D_" + std::to_string(o.teleport_cover) + " at rate " +
                                            number(o.teleport_rate)});
  if (o.cover_limit >= 0)
    facts.extra.push_back({"target restricted to", "D_" + std::to_string(o.cover_limit)});
  return facts;
}

std::vector<std::vector<double>> edge_matrix(const RunDiagnostics& d, int n) {
  std::vector<std::vector<double>> m(std::size_t(n), std::vector<double>(std::size_t(n), 0.0));
  for (int v = 0; v < n; ++v) m[std::size_t(v)][std::size_t(v)] = std::nan("");
  for (std::size_t i = 0; i < d.features.size(); ++i)
    if (d.features[i].kind == FeatureKind::kEdge)
      m[std::size_t(d.features[i].from)][std::size_t(d.features[i].to)] = d.summaries[i].mean;
  return m;
}

// The indicator of feature `f` in every draw (chain-major).
void feature_draws(const RunFeatures& draws, const FeatureId& f, std::span<double> out) {
  switch (f.kind) {
    case FeatureKind::kEdge:
      return draws.edge(f.from, f.to, out);
    case FeatureKind::kAdjacency:
      return draws.adjacency(f.from, f.to, out);
    case FeatureKind::kAncestor:
      return draws.ancestor(f.from, f.to, out);
    case FeatureKind::kScore:
      return draws.log_score(out);
  }
}

constexpr std::size_t kTracedFeatures = 3;    // worst features drawn by chain
constexpr std::size_t kPointsPerChain = 400;  // points per chain in those plots

// Running means per chain of the worst assessable 0/1 features (worst_first), thinned to at most
// kPointsPerChain points per chain.
std::vector<FeatureTrace> worst_feature_traces(const RunFeatures& draws, const RunDiagnostics& d,
                                               const Thresholds& thresholds) {
  std::vector<FeatureTrace> traces;
  const auto iterations = static_cast<std::size_t>(draws.iterations());
  std::vector<double> values(iterations * static_cast<std::size_t>(draws.chains()));
  const std::size_t stride = std::max<std::size_t>(1, iterations / kPointsPerChain);
  for (std::size_t i : worst_first(d.summaries, thresholds)) {
    if (traces.size() == kTracedFeatures) break;
    if (d.features[i].kind == FeatureKind::kScore ||
        assess(d.summaries[i], thresholds) == FeatureStatus::kUndefined)
      continue;
    feature_draws(draws, d.features[i], values);
    FeatureTrace trace;
    trace.feature = i;
    for (int c = 0; c < draws.chains(); ++c) {
      const auto steps = draws.draw_steps(c);
      FeatureTrace::Chain chain;
      double sum = 0;
      for (std::size_t t = 0; t < iterations; ++t) {
        sum += values[static_cast<std::size_t>(c) * iterations + t];
        if ((t + 1) % stride != 0 && t + 1 != iterations) continue;
        chain.steps.push_back(steps[t]);
        chain.running_mean.push_back(sum / static_cast<double>(t + 1));
      }
      trace.chains.push_back(std::move(chain));
    }
    traces.push_back(std::move(trace));
  }
  return traces;
}

}  // namespace

ReportData report_data_from_runs(const std::vector<ChainRun>& runs, const RunFeatures& draws,
                                 const RunDiagnostics& d, const Thresholds& thresholds) {
  ReportData data;
  data.variables = runs.front().variables();
  for (const ChainRun& run : runs) data.source += (data.source.empty() ? "" : ", ") + run.path();
  // The traces come from the draws already in memory (cut to a common length).
  for (int c = 0; c < draws.chains(); ++c) {
    const auto steps = draws.draw_steps(c);
    const auto scores = draws.log_scores(c);
    data.traces.push_back({{steps.begin(), steps.end()}, {scores.begin(), scores.end()}});
  }
  for (std::size_t i = 0; i < d.features.size(); ++i) {
    ReportFeature f;
    f.kind = d.features[i].kind;
    f.from = d.features[i].from;
    f.to = d.features[i].to;
    const FeatureSummary& s = d.summaries[i];
    f.probability = s.mean;
    f.rhat = s.rhat;
    f.ess_bulk = s.ess_bulk;
    f.ess_tail = s.ess_tail;
    f.mcse = s.mcse;
    data.features.push_back(f);
  }
  data.edge_probability = edge_matrix(d, draws.num_variables());
  data.feature_traces = worst_feature_traces(draws, d, thresholds);
  data.run = run_facts(runs, d);
  data.rhat_threshold = thresholds.max_rhat;
  data.ess_threshold = thresholds.min_ess;
  const Verdict verdict = judge(d.summaries, thresholds);
  if (verdict.passing + verdict.failing > 0 && !verdict.converged())
    data.cautions.push_back(std::to_string(verdict.failing) +
                            " features fail the convergence thresholds: the probabilities "
                            "shown are not yet reliable; run the chains longer.");
  if (d.chains >= 2 && d.chains < 4)  // one chain: the verdict's own caveat says more
    data.cautions.push_back("Only " + std::to_string(d.chains) +
                            " chains: R-hat is more reliable with 4 or more.");
  return data;
}

Comparison compare_run_edges(const RunDiagnostics& d, const PosteriorEstimate& other,
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

ReportData run_report_data(const RunReportRequest& request) {
  check_thresholds(request.thresholds, "report");
  if (!(request.consensus >= 0 && request.consensus < 1)) {
    char value[32];
    std::snprintf(value, sizeof value, "%g", request.consensus);
    throw OptionError("report: {consensus} must lie in [0, 1), got " + std::string(value));
  }
  FeatureKinds kinds = request.kinds;
  kinds.edges = true;  // the heat map, consensus DAG and comparison need them
  const std::vector<ChainRun> runs = open_runs(request.runs);
  // Read the other side first: a wrong file fails before the long diagnostics.
  std::optional<PosteriorEstimate> other;
  if (!request.compare.empty()) {
    CompareOptions co;
    co.kinds = FeatureKinds{true, false, false, false};
    co.memory_limit = request.memory_limit;
    other.emplace(PosteriorEstimate::load({request.compare}, co));
    if (other->variables() != runs.front().variables() ||
        other->table_fingerprint() != runs.front().table_fingerprint())
      throw InputError(request.compare + ": made from another score table than " +
                       request.runs.front());
  }
  const RunFeatures draws(runs, kinds.ancestors);
  const std::vector<FeatureId> features = list_features(draws.num_variables(), kinds);
  const RunDiagnostics d = diagnose_run_with_progress(draws, features, "report: diagnostics");
  ReportData data = report_data_from_runs(runs, draws, d, request.thresholds);
  if (!request.title.empty()) data.title = request.title;
  data.consensus_threshold = request.consensus;
  if (other) {
    data.comparison = compare_run_edges(d, *other, "chain run (" + request.runs.front() + ")");
    data.comparison->title =
        "Edge probabilities: " + data.comparison->label_a + " against " + data.comparison->label_b;
    if (other->source() == PosteriorSource::kCoverDraws)
      data.cautions.push_back(
          "The comparison's second posterior is restricted to the DAGs whose moral graph has "
          "a vertex cover of at most " +
          std::to_string(other->cover_bound()) +
          " vertices; differences show what that restriction changes, not errors.");
  }
  return data;
}

}  // namespace covey
