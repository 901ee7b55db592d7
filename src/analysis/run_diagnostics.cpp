#include "covey/analysis/run_diagnostics.hpp"

#include <cmath>
#include <cstdio>
#include <numeric>

#include "core/progress.hpp"
#include "covey/chains/structure_chain.hpp"
#include "covey/core/error.hpp"

namespace covey {

std::vector<ChainRun> open_runs(const std::vector<std::string>& paths) {
  if (paths.empty()) throw InputError("no run file given");
  std::vector<ChainRun> runs;
  runs.reserve(paths.size());
  // A manifest of a distributed run stands for its per-rank member files.
  for (const std::string& path : paths)
    for (const std::string& member : run_member_files(path)) runs.push_back(ChainRun::open(member));
  return runs;
}

namespace {

void fill_feature(const RunFeatures& draws, const FeatureId& f, std::span<double> values) {
  switch (f.kind) {
    case FeatureKind::kEdge:
      draws.edge(f.from, f.to, values);
      return;
    case FeatureKind::kAdjacency:
      draws.adjacency(f.from, f.to, values);
      return;
    case FeatureKind::kAncestor:
      draws.ancestor(f.from, f.to, values);
      return;
    case FeatureKind::kScore:
      draws.log_score(values);
      return;
  }
}

std::size_t complete_tours(const std::vector<std::vector<std::size_t>>& starts) {
  std::size_t tours = 0;
  for (const auto& s : starts) tours += s.size() > 1 ? s.size() - 1 : 0;
  return tours;
}

}  // namespace

RunDiagnostics diagnose_run(const RunFeatures& draws, const std::vector<FeatureId>& features,
                            const ProgressCallback& progress) {
  check_draws_shape(draws.chains(), draws.iterations(), "run");
  RunDiagnostics out;
  out.chains = draws.chains();
  out.iterations = draws.iterations();
  out.regenerations = draws.regenerations();
  out.tours = complete_tours(draws.tour_starts());
  out.features = features;
  out.regenerative_se.assign(features.size(), std::nan(""));
  const bool regenerative = out.tours >= 2;
  // The regenerative estimate is computed beside the summary from the same series; each index
  // is written by one task only.
  out.summaries = summarize_features(
      features.size(), draws.chains(), draws.iterations(),
      [&](std::size_t i, std::span<double> values) {
        fill_feature(draws, features[i], values);
        if (!regenerative) return;
        const DrawsView view{values, draws.chains(), draws.iterations()};
        out.regenerative_se[i] = regenerative_mean(view, draws.tour_starts()).standard_error;
      },
      progress);
  return out;
}

RunDiagnostics diagnose_run_with_progress(const RunFeatures& draws,
                                          const std::vector<FeatureId>& features,
                                          const std::string& label) {
  Progress progress(label);
  const auto total = static_cast<double>(features.size());
  RunDiagnostics d = diagnose_run(draws, features, [&progress, total](std::size_t done) {
    progress.update(static_cast<double>(done), total);
  });
  progress.finish();
  return d;
}

}  // namespace covey
