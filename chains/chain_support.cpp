#include "covey/chains/chain_support.hpp"

#include <cmath>

#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"
#include "covey/diagnostics/diagnostics.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "covey/graph/cover_class.hpp"

namespace covey {

Verdict edge_convergence(const RunFeatures& features, const Thresholds& thresholds) {
  if (features.iterations() < kMinDrawsPerChain) return {};  // too few to judge
  const auto edges = features.edges_seen();
  const auto summaries = summarize_features(edges.size(), features.chains(), features.iterations(),
                                            [&](std::size_t i, std::span<double> out) {
                                              features.edge(edges[i].first, edges[i].second, out);
                                            });
  return judge(summaries, thresholds);
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
  int support_bound() const { return sampler_.cover_bound(); }
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
  std::unique_ptr<CoverTeleport> start;  // the sampler of start "exact" alone, once built

  // The sampler of the exact starts, built on the first call (a new run; a resume never asks):
  // the teleports' one when its class is D_{start_cover}, else one of its own within the memory
  // limit.
  const TeleportSource& start_sampler(const ScoreTable& table, int k, std::uint64_t memory_limit) {
    if (teleport && teleport->support_bound() == k) return *teleport;
    if (!start) {
      const double bytes = CoverSampler::estimate_memory_bytes(table.num_variables(), k);
      const std::uint64_t limit = memory_limit > 0 ? memory_limit : default_memory_limit();
      if (bytes > double(limit))
        throw OptionError(
            "{start} exact: the exact sampler of D_" + std::to_string(k) + " needs about " +
            format_bytes(bytes) + ", more than the memory limit of " + format_bytes(double(limit)) +
            "; give a smaller {start_cover}, a larger {memory_limit} or {start} greedy");
      CoverSamplerOptions options;
      options.memory_limit_bytes = memory_limit;
      start = std::make_unique<CoverTeleport>(CoverSampler::build(table, k, options));
    }
    return *start;
  }
};

ChainSupport::ChainSupport(const ScoreTable& table, const ChainRunOptions& options,
                           const std::string& sampler_path, std::uint64_t memory_limit)
    : impl_(std::make_unique<Impl>()) {
  if (options.teleport_cover >= 0 && options.cover_limit >= 0 &&
      options.cover_limit < options.teleport_cover)
    throw OptionError("{cover_limit} " + std::to_string(options.cover_limit) +
                      " must be at least {teleport_cover} " +
                      std::to_string(options.teleport_cover) +
                      " (teleports draw from D_k, which must lie inside the target class)");
  if (options.teleport_cover >= 0) {
    CoverSamplerOptions sampler_options;
    sampler_options.memory_limit_bytes = memory_limit;
    CoverSampler sampler = sampler_path.empty()
                               ? CoverSampler::build(table, options.teleport_cover, sampler_options)
                               : CoverSampler::load(sampler_path, table, sampler_options);
    if (sampler.cover_bound() != options.teleport_cover)
      throw OptionError(sampler_path + ": the saved sampler is for cover bound " +
                        std::to_string(sampler.cover_bound()) + ", not {teleport_cover} " +
                        std::to_string(options.teleport_cover));
    impl_->teleport = std::make_unique<CoverTeleport>(std::move(sampler));
    impl_->hooks.teleport = impl_->teleport.get();
  }
  if (options.cover_limit >= 0) {
    impl_->restriction = std::make_unique<CoverBoundedClass>(options.cover_limit);
    impl_->hooks.restriction = impl_->restriction.get();
  }
  if (options.until_enabled()) impl_->hooks.convergence = edge_convergence;
  const ChainRunOptions chosen = with_default_choices(options);
  if (chosen.start == "exact") {
    // The table and this object outlive the hooks (ChainSupport's contract).
    Impl* impl = impl_.get();
    const int k = chosen.start_cover;
    impl_->hooks.start_sampler = [impl, &table, k, memory_limit]() -> const TeleportSource& {
      return impl->start_sampler(table, k, memory_limit);
    };
  }
}

ChainSupport::~ChainSupport() = default;

ChainRunHooks ChainSupport::hooks() const {
  return impl_->hooks;
}

}  // namespace covey
