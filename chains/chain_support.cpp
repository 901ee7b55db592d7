#include "covey/chains/chain_support.hpp"

#include <cmath>

#include "covey/core/error.hpp"
#include "covey/diagnostics/diagnostics.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "covey/graph/cover_class.hpp"

namespace covey {

ConvergenceStatus edge_convergence(const RunFeatures& features, double max_rhat, double min_ess) {
  ConvergenceStatus status;
  if (features.iterations() < kMinDrawsPerChain) return status;  // too few to judge
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

namespace {

// D_k as a chain restriction or a teleport's support: exact membership by the bounded search
// tree for a vertex cover of the moral graph.
class CoverBoundedClass : public DagClass {
 public:
  explicit CoverBoundedClass(int k) : k_(k) {}
  bool contains(const Dag& dag) const override { return in_cover_class(dag, k_); }

 private:
  int k_;
};

// Teleport proposals: exact draws from w restricted to D_k (so w_p = w and a teleport is
// accepted exactly when the current state lies in D_k).
class CoverTeleport : public TeleportSource {
 public:
  explicit CoverTeleport(CoverSampler sampler)
      : sampler_(std::move(sampler)), support_(sampler_.cover_bound()) {}
  const DagClass& support() const override { return support_; }
  Dag draw(Rng& rng) const override { return sampler_.draw(rng); }
  double log_class_weight_bound() const override { return sampler_.log_upper_bound(); }

 private:
  CoverSampler sampler_;
  CoverBoundedClass support_;
};

}  // namespace

struct ChainSupport::Impl {
  ChainRunHooks hooks;
  std::unique_ptr<CoverTeleport> teleport;
  std::unique_ptr<CoverBoundedClass> restriction;
};

ChainSupport::ChainSupport(const ScoreTable& table, const ChainRunOptions& options,
                           const std::string& sampler_path, std::uint64_t memory_limit)
    : impl_(std::make_unique<Impl>()) {
  if (options.teleport_cover >= 0 && options.cover_limit >= 0 &&
      options.cover_limit < options.teleport_cover)
    throw InputError("--cover-limit " + std::to_string(options.cover_limit) +
                     " must be at least --teleport-cover " +
                     std::to_string(options.teleport_cover) +
                     " (teleports draw from D_k, which must lie inside the target class)");
  if (options.teleport_cover >= 0) {
    CoverSamplerOptions sampler_options;
    sampler_options.memory_limit_bytes = memory_limit;
    CoverSampler sampler = sampler_path.empty()
                               ? CoverSampler::build(table, options.teleport_cover, sampler_options)
                               : CoverSampler::load(sampler_path, table, sampler_options);
    if (sampler.cover_bound() != options.teleport_cover)
      throw InputError(sampler_path + ": the saved sampler is for cover bound " +
                       std::to_string(sampler.cover_bound()) + ", not --teleport-cover " +
                       std::to_string(options.teleport_cover));
    impl_->teleport = std::make_unique<CoverTeleport>(std::move(sampler));
    impl_->hooks.teleport = impl_->teleport.get();
  }
  if (options.cover_limit >= 0) {
    impl_->restriction = std::make_unique<CoverBoundedClass>(options.cover_limit);
    impl_->hooks.restriction = impl_->restriction.get();
  }
  if (options.until_enabled()) impl_->hooks.convergence = edge_convergence;
}

ChainSupport::~ChainSupport() = default;

ChainRunHooks ChainSupport::hooks() const {
  return impl_->hooks;
}

}  // namespace covey
