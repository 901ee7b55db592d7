#pragma once
// Reading chain-run files, the HDF5 traces of `covey chain -o RUN.h5` (layout in
// docs/file-formats.md, "Chain runs"): one group per chain with the thinned DAGs (packed global
// parent bitsets), their log scores and steps, the steps at which teleports regenerated the
// chain, and a record of every checkpoint (chain state, random-stream state, move counts).
//
// A run file is always a complete checkpoint: each checkpoint writes a new file and renames it
// over the old one, so a killed run leaves the file of its last checkpoint.
#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "covey/chains/chain_options.hpp"
#include "covey/chains/structure_chain.hpp"
#include "covey/core/attributes.hpp"
#include "covey/scores/score_table.hpp"

namespace covey {

inline constexpr const char* kChainRunFormat = "covey-chain-run";
inline constexpr long long kChainRunFormatVersion = 1;
// A run made by several MPI ranks: each rank writes a run file of its own chains (a "member"),
// and a small manifest at the -o path lists them (docs/file-formats.md, "Chain runs over MPI").
inline constexpr const char* kChainManifestFormat = "covey-chain-manifest";
inline constexpr long long kChainManifestFormatVersion = 1;

// One chain at a checkpoint: everything needed to continue it bit for bit.
struct ChainCheckpoint {
  std::uint64_t steps = 0;
  std::vector<std::uint64_t> parents;  // n * words_per_node global parent words
  std::string rng_state;               // save_stream() text
  MoveCounts counts;
  std::uint64_t regenerations = 0;  // accepted teleports so far
  // Rejection skipping: the quiet steps left before the next event, when the chain holds a
  // wait (docs/chains.md, "Rejection skipping"); none in runs without skipping.
  std::optional<std::uint64_t> skip_wait;
};

class ChainRun {
 public:
  // Opens and validates a run file (InputError naming the file when it is not one or is
  // corrupt). Reads the metadata and the last checkpoint's counts; the series are read on demand.
  static ChainRun open(const std::string& path);

  const std::string& path() const { return path_; }
  int num_chains() const { return num_chains_; }
  // The run-wide index of each chain of this file: 0..num_chains()-1 for a single-process run;
  // in a member file of an MPI run, the chains that rank ran (local chain c is global chain
  // global_chains()[c], and its random stream is make_stream(seed, global_chains()[c])).
  const std::vector<int>& global_chains() const { return global_chains_; }
  int num_variables() const { return static_cast<int>(variables_.size()); }
  int words_per_node() const { return words_; }
  const std::vector<std::string>& variables() const { return variables_; }
  std::uint64_t table_fingerprint() const { return fingerprint_; }
  // The options fixed at creation, as stored (the session options keep their defaults).
  const ChainRunOptions& options() const { return options_; }
  // One record per session that wrote the file (command_line, covey_version, unix_time,
  // start_step, and notes such as teleport_note), oldest first.
  const std::vector<Attributes>& sessions() const { return sessions_; }
  // For a member file of an MPI run: its rank and the number of ranks; -1 otherwise.
  int mpi_rank() const { return mpi_rank_; }
  int mpi_ranks() const { return mpi_ranks_; }

  std::uint64_t steps() const { return steps_; }          // steps per chain so far
  std::uint64_t num_draws() const { return num_draws_; }  // thinned draws per chain
  std::size_t num_checkpoints() const { return num_checkpoints_; }
  double elapsed_seconds() const { return elapsed_seconds_; }  // summed over sessions

  // Thinned DAGs of one chain: num_draws() rows of n * words_per_node() words (node-major; bit u
  // of node v's words is the edge u -> v).
  std::vector<std::uint64_t> draws(int chain) const;
  std::vector<double> log_scores(int chain) const;
  std::vector<std::int64_t> draw_steps(int chain) const;
  // Steps after which an accepted teleport had made the state an exact draw from D_k (step 0:
  // the chain started from an exact draw). Tours between them are i.i.d.
  std::vector<std::int64_t> regenerations(int chain) const;
  ChainCheckpoint checkpoint(int chain) const;  // the last one
  MoveCounts move_counts(int chain) const { return checkpoint(chain).counts; }

  // Throws InputError unless the run was made from this table (fingerprint and names).
  void check_table(const ScoreTable& table) const;

 private:
  void check_chain(int chain) const;

  std::string path_;
  int num_chains_ = 0;
  std::vector<int> global_chains_;
  int words_ = 0;
  std::vector<std::string> variables_;
  std::uint64_t fingerprint_ = 0;
  ChainRunOptions options_;
  std::vector<Attributes> sessions_;
  int mpi_rank_ = -1, mpi_ranks_ = -1;
  std::uint64_t steps_ = 0, num_draws_ = 0;
  std::size_t num_checkpoints_ = 0;
  double elapsed_seconds_ = 0;
};

// The manifest of an MPI run (written by rank 0 beside the member files).
struct RunManifest {
  std::string path;
  int num_chains = 0;                    // over all members
  std::vector<std::string> members;      // member run files, resolved against the manifest's folder
  std::vector<std::vector<int>> chains;  // the global chain indices each member holds
  ChainRunOptions options;               // the fixed run options (as in each member)
};

// True when `path` is a readable HDF5 file whose format attribute names a manifest.
bool is_run_manifest(const std::string& path);
// Reads a manifest (InputError naming the file when it is broken).
RunManifest read_run_manifest(const std::string& path);
// The run files that make up the run at `path`: the members a manifest lists, in global chain
// order (InputError on a broken manifest or a missing member), or {path} for anything else (a
// plain run file; ChainRun::open then reports a file that is not one).
std::vector<std::string> run_member_files(const std::string& path);

// Graph features of the thinned draws of one run, or of several runs of the same table taken
// together (their chains side by side, e.g. the per-rank files of one distributed run), as
// indicator series in the chains x draws chain-major layout of the diagnostics (draw t of chain
// c at [c * iterations + t]). Runs with different numbers of draws are cut to the shortest.
// Holds the packed draws in memory; the accessors are const and safe to call from several
// threads.
class RunFeatures {
 public:
  explicit RunFeatures(const ChainRun& run, bool with_ancestors = false);
  // Throws InputError naming the file when a run was made from another table than the first.
  explicit RunFeatures(const std::vector<ChainRun>& runs, bool with_ancestors = false);

  int chains() const { return chains_; }
  int iterations() const { return static_cast<int>(iterations_); }
  int num_variables() const { return n_; }
  // Directed edges present in at least one draw, ascending by (from, to). Edges never present
  // are constant 0 in every chain.
  std::vector<std::pair<int, int>> edges_seen() const;
  void edge(int from, int to, std::span<double> out) const;   // 1 when from -> to
  void adjacency(int a, int b, std::span<double> out) const;  // 1 when a -> b or b -> a
  // 1 when a directed path from -> ... -> to exists (needs with_ancestors, else Error).
  void ancestor(int from, int to, std::span<double> out) const;
  void log_score(std::span<double> out) const;
  // One chain's kept draws: their step numbers and log scores (iterations() of each).
  std::span<const std::int64_t> draw_steps(int chain) const {
    return {steps_.data() + std::size_t(chain) * iterations_, iterations_};
  }
  std::span<const double> log_scores(int chain) const {
    return {log_scores_.data() + std::size_t(chain) * iterations_, iterations_};
  }
  // 1 when the draw lies in the cover-bounded class D_k.
  void in_cover_class(int k, std::span<double> out) const;
  // Per chain, the draw positions at which a tour between teleport regenerations starts (the
  // first kept draw at or after each regeneration step); the input of regenerative_mean(),
  // which leaves out the draws before the first start and the unfinished last tour.
  const std::vector<std::vector<std::size_t>>& tour_starts() const { return tour_starts_; }
  std::size_t regenerations() const { return regenerations_; }

 private:
  void append(const ChainRun& run);
  void compute_ancestors();
  // The column of parent (or ancestor) words of `to` that holds the bit of `from`, one word per
  // draw.
  const std::uint64_t* parent_column(const std::vector<std::uint64_t>& sets, int from,
                                     int to) const {
    return sets.data() + (std::size_t(to) * words_ + std::size_t(from >> 6)) * total_;
  }
  int chains_ = 0, n_ = 0, words_ = 0;
  std::size_t iterations_ = 0, stride_ = 0, total_ = 0;  // total_ = chains_ * iterations_
  // All chains' draws node-major: parent word w (of stride_ per draw) of draw r at
  // [w * total_ + r], draws chain-major; one feature's series is then one contiguous column.
  std::vector<std::uint64_t> columns_;
  std::vector<std::uint64_t> ancestors_;  // per node its ancestors, same layout (with_ancestors)
  std::vector<double> log_scores_;
  std::vector<std::int64_t> steps_;  // step number of every kept draw, chain-major
  std::vector<std::vector<std::size_t>> tour_starts_;
  std::size_t regenerations_ = 0;
};

}  // namespace covey
