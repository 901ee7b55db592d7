#include "covey/chain_support.hpp"

#include "covey/error.hpp"

namespace covey {

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
  if (options.until_enabled())
    throw InputError("--until-rhat and --until-ess need the diagnostics module");
}

ChainSupport::~ChainSupport() = default;

ChainRunHooks ChainSupport::hooks() const {
  return impl_->hooks;
}

}  // namespace covey
