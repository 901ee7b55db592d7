// The options of a chain run: automatic choices, the stored record, and the rule of a resume
// (include/covey/chains/chain_options.hpp).
#include "covey/chains/chain_options.hpp"

#include <algorithm>
#include <array>

#include "chain_options_json.hpp"
#include "covey/chains/chain_run_file.hpp"
#include "covey/core/error.hpp"

namespace covey {
namespace {

// Teleport probability per step when a teleport class is given and no rate (docs/chains.md).
constexpr double kDefaultTeleportRate = 0.01;

constexpr std::array<const char*, 13> kFixedFields = {
    "chains",        "thin",           "burn_in",        "seed",  "rev_rate",
    "teleport_rate", "teleport_cover", "cover_limit",    "start", "start_cover",
    "block_size",    "block_rate",     "skip_rejections"};

}  // namespace

Thresholds stopping_thresholds(const ChainRunOptions& options) {
  Thresholds thresholds;
  if (options.until_rhat > 0) thresholds.max_rhat = options.until_rhat;
  if (options.until_ess > 0) thresholds.min_ess = options.until_ess;
  return thresholds;
}

ChainRunOptions with_default_choices(ChainRunOptions o) {
  if (o.teleport_rate < 0) o.teleport_rate = o.teleport_cover >= 0 ? kDefaultTeleportRate : 0.0;
  if (o.start.empty()) o.start = o.teleport_cover >= 0 ? "exact" : "greedy";
  if (o.start == "exact" && o.start_cover < 0)
    o.start_cover = o.teleport_cover >= 0 ? o.teleport_cover : kDefaultStartCover;
  return o;
}

std::span<const char* const> fixed_option_fields() {
  return kFixedFields;
}

nlohmann::json fixed_options_to_json(const ChainRunOptions& o) {
  return {{"chains", o.chains},
          {"thin", o.thin},
          {"burn_in", o.burn_in},
          {"seed", o.seed},
          {"rev_rate", o.rev_rate},
          {"teleport_rate", o.teleport_rate},
          {"teleport_cover", o.teleport_cover},
          {"cover_limit", o.cover_limit},
          {"start", o.start},
          {"start_cover", o.start_cover},
          {"block_size", o.block_size},
          {"block_rate", o.block_rate},
          {"skip_rejections", o.skip_rejections}};
}

ChainRunOptions fixed_options_from_json(const nlohmann::json& s, const std::string& path) {
  ChainRunOptions o;
  try {
    o.chains = s.at("chains").get<int>();
    o.thin = s.at("thin").get<std::uint64_t>();
    o.burn_in = s.at("burn_in").get<std::uint64_t>();
    o.seed = s.at("seed").get<std::uint64_t>();
    o.rev_rate = s.at("rev_rate").get<double>();
    o.teleport_rate = s.at("teleport_rate").get<double>();
    o.teleport_cover = s.at("teleport_cover").get<int>();
    o.cover_limit = s.at("cover_limit").get<int>();
    o.start = s.at("start").get<std::string>();
    // Runs made before start_cover drew their exact starts from the teleports' D_k.
    o.start_cover = s.value("start_cover", o.start == "exact" ? o.teleport_cover : -1);
    o.block_size = s.value("block_size", 0);  // runs made before block moves have none
    o.block_rate = s.value("block_rate", 0.0);
    o.skip_rejections = s.value("skip_rejections", false);  // runs made before it skip none
  } catch (const nlohmann::json::exception& e) {
    throw InputError(path + ": corrupt run options: " + e.what());
  }
  return o;
}

ChainRunOptions resume_options(const std::string& run_path, const ChainRunOptions& given,
                               std::span<const std::string> given_fields) {
  // An MPI run keeps the options in every member; the first one stands for the run.
  const ChainRunOptions stored = ChainRun::open(run_member_files(run_path).front()).options();
  const nlohmann::json stored_json = fixed_options_to_json(stored);
  const nlohmann::json given_json = fixed_options_to_json(with_default_choices(given));
  for (const std::string& field : given_fields) {
    if (std::find(kFixedFields.begin(), kFixedFields.end(), field) == kFixedFields.end()) continue;
    if (stored_json.at(field) != given_json.at(field))
      throw OptionError("{" + field + "} cannot be changed on {resume} (the run was created with " +
                        stored_json.at(field).dump() + ")");
  }
  ChainRunOptions out = stored;
  out.steps = given.steps;
  out.max_seconds = given.max_seconds;
  out.until_rhat = given.until_rhat;
  out.until_ess = given.until_ess;
  out.checkpoint_every = given.checkpoint_every;
  out.check_every = given.check_every;
  out.overwrite = given.overwrite;
  return out;
}

}  // namespace covey
