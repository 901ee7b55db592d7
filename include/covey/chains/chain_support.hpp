#pragma once
// The pieces a chain run takes from other modules, built from the run options: the exact
// teleport sampler of D_k (cover_sampler.hpp), the sampler of the exact starts (the teleports'
// one, or one of D_{start_cover} built when a run is created), the class D_k' of --cover-limit
// (cover_class.hpp), and the convergence check of --until-rhat/--until-ess (diagnostics.hpp).
// The table and the ChainSupport must outlive the hooks.
#include <cstdint>
#include <memory>
#include <string>

#include "covey/chains/chain_runner.hpp"

namespace covey {

// The stopping rule's check: R-hat, bulk and tail ESS (diagnostics.hpp) of every directed-edge
// indicator over all chains' stored draws. Edges constant across all draws (never or always
// present) have undefined diagnostics and are reported as such, not assessed; the run counts
// as converged when every assessed edge passes and at least one could be assessed.
// Too few draws per chain to judge (kMinDrawsPerChain) give an empty, undetermined verdict.
Verdict edge_convergence(const RunFeatures& features, const Thresholds& thresholds);

class ChainSupport {
 public:
  // `sampler_path`: a saved cover sampler to load instead of building one ("" to build);
  // `memory_limit`: the ceiling of each sampler's estimated memory (0: default_memory_limit());
  // the start sampler's is told as an OptionError naming start_cover and memory_limit.
  ChainSupport(const ScoreTable& table, const ChainRunOptions& options,
               const std::string& sampler_path = "", std::uint64_t memory_limit = 0);
  ~ChainSupport();
  ChainSupport(const ChainSupport&) = delete;
  ChainSupport& operator=(const ChainSupport&) = delete;
  ChainRunHooks hooks() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace covey
