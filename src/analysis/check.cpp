// The model of `covey check` (include/covey/analysis/check.hpp).
#include "covey/analysis/check.hpp"

#include <algorithm>
#include <cstdio>
#include <span>

#include "core/progress.hpp"
#include "covey/analysis/run_diagnostics.hpp"
#include "covey/core/error.hpp"
#include "covey/diagnostics/draws_csv.hpp"

namespace covey {

namespace {

// Statuses, order and verdict: everything the thresholds decide.
void judge_items(CheckResult& result, const Thresholds& thresholds) {
  result.thresholds = thresholds;
  result.status.clear();
  for (const FeatureSummary& s : result.summaries) result.status.push_back(assess(s, thresholds));
  result.worst_first = worst_first(result.summaries, thresholds);
  result.verdict = judge(result.summaries, thresholds);
  result.context.chains = result.chains;
  result.context.noun = result.plural;
  result.context.draws = static_cast<std::size_t>(result.chains) * result.iterations;
  result.context.unreliable_mcse = 0;
  for (std::size_t i = 0; i < result.items.size(); ++i)
    if (result.items[i].mean_key == "probability" &&
        mcse_unreliable(result.summaries[i].mean, result.context.draws))
      ++result.context.unreliable_mcse;
}

CheckedItem feature_item(const FeatureId& f, const std::vector<std::string>& names) {
  CheckedItem item;
  item.kind = to_string(f.kind);
  if (f.kind != FeatureKind::kScore) {
    item.from = names[std::size_t(f.from)];
    item.to = names[std::size_t(f.to)];
  }
  item.mean_key = f.kind == FeatureKind::kScore ? "mean" : "probability";
  item.display_name = feature_label(f, names);
  return item;
}

}  // namespace

void check_thresholds(const Thresholds& thresholds, const std::string& context) {
  if (!(thresholds.max_rhat > 1)) {
    char value[32];
    std::snprintf(value, sizeof value, "%g", thresholds.max_rhat);
    throw OptionError(context + ": {max_rhat} must exceed 1, got " + std::string(value));
  }
  // ESS must exceed the threshold; 0 only asks for a defined ESS, so any value >= 0 is a rule.
  if (!(thresholds.min_ess >= 0)) {
    char value[32];
    std::snprintf(value, sizeof value, "%g", thresholds.min_ess);
    throw OptionError(context + ": {min_ess} must be at least 0, got " + std::string(value));
  }
}

VerdictText verdict_text(const CheckResult& result) {
  return verdict_text(result.verdict, result.thresholds, result.context);
}

VerdictText stopping_verdict_text(const ChainRunSummary& summary) {
  VerdictContext context;
  context.chains = summary.chains;
  context.noun = "edge features";
  return verdict_text(summary.convergence, summary.convergence_thresholds, context);
}

CheckResult check_chain_runs(const std::vector<std::string>& files, const FeatureKinds& kinds,
                             const Thresholds& thresholds) {
  check_thresholds(thresholds);
  const std::vector<ChainRun> runs = open_runs(files);
  const RunFeatures draws(runs, kinds.ancestors);
  const std::vector<FeatureId> features = list_features(draws.num_variables(), kinds);
  const RunDiagnostics d = diagnose_run_with_progress(draws, features, "check: diagnostics");
  CheckResult result;
  for (const std::string& file : files) result.source += (result.source.empty() ? "" : ", ") + file;
  result.chains = d.chains;
  result.iterations = d.iterations;
  result.summaries = d.summaries;
  result.regenerations = d.regenerations;
  result.tours = d.tours;
  if (d.tours >= 2) result.regenerative_se = d.regenerative_se;
  const std::vector<std::string>& names = runs.front().variables();
  for (const FeatureId& f : features) result.items.push_back(feature_item(f, names));
  judge_items(result, thresholds);
  return result;
}

CheckResult check_draws_csv(const std::string& path, const Thresholds& thresholds) {
  check_thresholds(thresholds);
  const DrawsTable table = read_draws_csv(path);
  CheckResult result;
  result.source = path;
  result.chains = table.chains;
  result.iterations = table.iterations;
  result.plural = "quantities";
  for (const std::string& name : table.names)
    result.items.push_back({"quantity", name, "", "", "mean", name});
  Progress progress("check: diagnostics");
  const auto total = static_cast<double>(table.names.size());
  result.summaries = summarize_features(
      table.names.size(), table.chains, table.iterations,
      [&table](std::size_t q, std::span<double> values) {
        std::copy(table.columns[q].begin(), table.columns[q].end(), values.begin());
      },
      [&progress, total](std::size_t done) { progress.update(static_cast<double>(done), total); });
  judge_items(result, thresholds);
  return result;
}

}  // namespace covey
