#pragma once
// Writing chain-run files (internal to the chain runner; the layout is in
// docs/file-formats.md, "Chain runs", and the reader in include/covey/chains/chain_run_file.hpp).
//
// Crash safety: every write produces a complete new file beside the target and renames it over
// the target (AtomicOutput). A checkpoint copies the current file, appends to the copy, and
// renames; so a kill at any moment, during a checkpoint too, leaves the previous checkpoint's
// file intact. (In-place HDF5 updates were tried and rejected: kill -9 during an append damaged
// already committed chunks, also in SWMR mode with compressed, checksummed chunks.)
#include <cstdint>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "covey/chains/chain_run_file.hpp"

namespace covey::chain_file {

struct Header {
  std::vector<std::string> variables;
  std::uint64_t fingerprint = 0;
  int words_per_node = 1;
  int num_chains = 0;
  nlohmann::json options;  // run options (stored as the `options` JSON attribute)
  nlohmann::json session;  // this session's provenance (command line, version, start step)
  // Run-wide chain index of each chain (empty: 0..num_chains-1), and for a member of an MPI run
  // its rank and the number of ranks (-1: not a member).
  std::vector<int> global_chains;
  int mpi_rank = -1, mpi_ranks = -1;
};

// What one chain adds at a checkpoint, and its state there.
struct ChainBlock {
  std::vector<std::uint64_t> draws;  // rows of n * words_per_node words
  std::vector<double> log_scores;
  std::vector<std::int64_t> draw_steps;
  std::vector<std::int64_t> regenerations;
  ChainCheckpoint state;
};

// Creates a new run file at `path` holding checkpoint 0 (the start states).
void create(const std::string& path, const Header& header, const std::vector<ChainBlock>& blocks,
            std::uint64_t steps, double elapsed_seconds);

// Appends one checkpoint (new rows and every chain's state) through copy + append + rename.
// `new_session`, when not null, is added to the `sessions` attribute (a resumed run).
void append_checkpoint(const std::string& path, const std::vector<ChainBlock>& blocks,
                       std::uint64_t steps, double elapsed_seconds,
                       const nlohmann::json* new_session = nullptr);

// Writes the manifest of an MPI run (rank 0, after every member exists). `members` are paths as
// the ranks write them; the manifest stores them relative to its own folder.
void write_manifest(const std::string& path, const std::vector<std::string>& members,
                    const std::vector<std::vector<int>>& chains, const Header& header);

// The member file of rank `rank` of an MPI run written to `path`: RUN.h5 -> RUN.rank<r>.h5.
std::string member_path(const std::string& path, int rank);

// Removes temporary files of this target left by killed covey processes (".NAME.tmp-PID-*"
// whose process no longer exists).
void remove_stale_temporaries(const std::string& path);

// Dataset names (shared with the reader).
inline constexpr const char* kCheckpoints = "checkpoints";
inline constexpr const char* kVariables = "variables";
inline constexpr const char* kDraws = "draws";
inline constexpr const char* kLogScores = "log_scores";
inline constexpr const char* kDrawSteps = "steps";
inline constexpr const char* kRegenerations = "regenerations";
inline constexpr const char* kStateParents = "checkpoint_parents";
inline constexpr const char* kStateRng = "checkpoint_rng";
inline constexpr const char* kStateCounts = "checkpoint_counts";
// Rejection skipping's held wait per checkpoint: (1, wait) or (0, 0); only in runs with
// skip_rejections.
inline constexpr const char* kStateSkipWait = "checkpoint_skip_wait";
inline constexpr std::size_t kCheckpointWidth = 4;  // steps, draws, unix time ms, elapsed ms
inline constexpr std::size_t kRngWords = 1 + 1024;  // byte length, then up to 8192 bytes
inline constexpr std::size_t kCountsWidth = 2 + 2 * kNumMoves;
std::string chain_group_name(int chain);  // "chain_000", ...

}  // namespace covey::chain_file
