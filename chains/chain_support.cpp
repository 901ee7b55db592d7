#include "covey/chain_support.hpp"

#include <cmath>

#include "covey/diagnostics.hpp"
#include "covey/error.hpp"

namespace covey {

ConvergenceStatus edge_convergence(const ChainRun& run, double max_rhat, double min_ess) {
  ConvergenceStatus status;
  if (run.num_draws() < std::uint64_t(kMinDrawsPerChain)) return status;  // too few to judge
  const RunFeatures features(run);
  const auto edges = features.edges_seen();
  status.features = edges.size();
  if (edges.empty()) return status;
  const auto summaries = summarize_features(edges.size(), features.chains(), features.iterations(),
                                            [&](std::size_t i, std::span<double> out) {
                                              features.edge(edges[i].first, edges[i].second, out);
                                            });
  Thresholds thresholds;
  thresholds.max_rhat = max_rhat;
  thresholds.min_ess = min_ess;
  const Verdict verdict = judge(summaries, thresholds);
  status.converged = verdict.converged();
  status.failing = verdict.failing;
  status.undefined = verdict.undefined;
  status.max_rhat = verdict.max_rhat;
  status.min_ess = std::fmin(verdict.min_ess_bulk, verdict.min_ess_tail);
  return status;
}

struct ChainSupport::Impl {
  ChainRunHooks hooks;
};

ChainSupport::ChainSupport(const ScoreTable& /*table*/, const ChainRunOptions& options,
                           const std::string& /*sampler_path*/)
    : impl_(std::make_unique<Impl>()) {
  // Teleports, --cover-limit and the convergence rule come from the cover and diagnostics
  // modules, wired here once they are part of the build.
  if (options.teleport_cover >= 0 || options.cover_limit >= 0)
    throw InputError("--teleport-cover and --cover-limit need the cover-bounded sampler module");
  if (options.until_enabled()) impl_->hooks.convergence = edge_convergence;
}

ChainSupport::~ChainSupport() = default;

ChainRunHooks ChainSupport::hooks() const {
  return impl_->hooks;
}

}  // namespace covey
