#pragma once
// The options of a chain run (docs/chains.md): those fixed when the run is created and stored in
// its file, and those of one session (stopping, checkpointing), which a resume may give anew.
#include <cstdint>
#include <span>
#include <string>

#include "covey/diagnostics/diagnostics.hpp"

namespace covey {

// The cover bound of the exact start when neither start_cover nor teleport_cover is given: D_2
// is cheap to sample up to a few hundred variables (its tables grow as n^3: about 0.36 GB at
// n = 100; checked against the memory limit before they are built).
inline constexpr int kDefaultStartCover = 2;

struct ChainRunOptions {
  // Fixed at creation (stored in the file; a resume must not change them).
  int chains = 4;
  std::uint64_t thin = 1000;  // keep the state after every thin-th step
  std::uint64_t burn_in = 0;  // keep only steps > burn_in
  std::uint64_t seed = 1;
  double rev_rate = 1.0 / 15;  // REV probability per step
  double teleport_rate = -1;  // teleport probability per step; -1: 0.01 with teleport_cover, else 0
  int teleport_cover = -1;    // k of the teleport sampler; -1 none
  int cover_limit = -1;       // k' of a target restricted to D_k'; -1 none
  // "empty", "greedy", "exact" or a DAG file of `from<TAB>to` edges; "": exact with
  // teleport_cover (an exact draw from D_k per chain), else greedy.
  std::string start;
  // k of the exact sampler whose draws start the chains under start "exact"; -1: teleport_cover
  // when given, else kDefaultStartCover. Built for the starts alone when it differs from the
  // teleports' (or there are none).
  int start_cover = -1;
  // Exact block moves (docs/chains.md): m nodes per block and the probability per step; -1
  // asks run_chains to choose from the cost model (choose_block_settings) when the run is
  // created. The chosen values are stored, so a resume reuses them. 0: no block moves.
  int block_size = -1;
  double block_rate = -1;
  // Rejection skipping (docs/chains.md, "Rejection skipping"): the rejected local moves between
  // two evaluated ones are skipped by a geometric draw; the same chain in law, faster when most
  // local moves are rejected.
  bool skip_rejections = false;
  // Stopping and checkpointing (may be given anew on resume).
  std::uint64_t steps = 0;        // total steps per chain; 0: no step limit
  double max_seconds = 0;         // wall time of this session; 0: no limit
  double until_rhat = 0;          // stop when every edge feature has R-hat < this ...
  double until_ess = 0;           // ... and bulk and tail ESS > this (0: rule off)
  double checkpoint_every = 300;  // seconds between checkpoints
  // Seconds between checks of the stopping rule (until_rhat / until_ess), independent of the
  // checkpoints; 0: automatic, 10% of the run's time so far, at least 10 s and at most
  // checkpoint_every (docs/chains.md, "Stopping rules"). With a step limit the rule is also
  // checked at every tenth of the steps.
  double check_every = 0;
  // Creating a run over an existing file replaces it only when this is set (the CLI's
  // --force); a resume continues the file instead.
  bool overwrite = false;

  bool until_enabled() const { return until_rhat > 0 || until_ess > 0; }
};

// The thresholds of the stopping rule: until_rhat and until_ess, each with the default of
// Thresholds (R-hat 1.01, ESS 400) when only the other is given.
Thresholds stopping_thresholds(const ChainRunOptions& options);

// The options with every automatic choice made that needs no score table (teleport_rate,
// start, start_cover); run_chains also chooses the block moves from the table's cost model.
ChainRunOptions with_default_choices(ChainRunOptions options);

// The names of the options fixed at creation, as library fields (OptionError spells them):
// chains, thin, burn_in, seed, rev_rate, teleport_rate, teleport_cover, cover_limit, start,
// start_cover, block_size, block_rate, skip_rejections.
std::span<const char* const> fixed_option_fields();

// The options to continue the run at `run_path` with: its stored fixed options and the session
// options of `given`. A fixed option named in `given_fields` (the ones the user set) must equal
// the stored one: a resume cannot change how the run was made (OptionError naming the field).
ChainRunOptions resume_options(const std::string& run_path, const ChainRunOptions& given,
                               std::span<const std::string> given_fields);

}  // namespace covey
