#pragma once
// Running structure chains for a long time (docs/mathematics.md section 6): C chains in parallel
// under TBB, each with its own random stream make_stream(seed, chain), thinned DAGs and log scores
// written to one HDF5 run file (include/covey/chains/chain_run_file.hpp), checkpoints every few
// minutes, resume that continues bit for bit, and stopping by steps, wall time or convergence.
//
// Determinism: a chain's trajectory depends only on its stream and its step count, never on the
// thread count, on when checkpoints happen, or on whether the run was stopped and resumed: the
// same seed gives identical draws with 1 or 8 threads, and N steps + resume to 2N equals 2N
// steps straight.
#include <algorithm>
#include <atomic>
#include <cmath>
#include <cstdint>
#include <functional>
#include <limits>
#include <string>
#include <vector>

#include "covey/chains/chain_options.hpp"
#include "covey/chains/chain_run_file.hpp"
#include "covey/chains/structure_chain.hpp"
#include "covey/diagnostics/diagnostics.hpp"
#include "covey/scores/score_table.hpp"

namespace covey {

// The stopping rule's judge: the verdict of diagnostics.hpp (the one rule of `check` and the
// report) over the draws of all chains (over MPI: of every rank's chains, read by rank 0).
using ConvergenceCheck =
    std::function<Verdict(const RunFeatures& run, const Thresholds& thresholds)>;

struct ChainRunHooks {
  const TeleportSource* teleport = nullptr;  // exact D_k sampler of the teleports
  // The exact sampler of D_{start_cover} for start "exact", asked for only when a run is
  // created (ChainSupport builds it then, unless it is the teleports'); none: `teleport`.
  std::function<const TeleportSource&()> start_sampler;
  const DagClass* restriction = nullptr;          // D_k' for cover_limit
  ConvergenceCheck convergence;                   // for until_rhat / until_ess
  const std::atomic<int>* stop_signal = nullptr;  // nonzero: checkpoint now and stop
  bool progress = true;  // a progress line, shown only when stderr is a terminal
  // Called on the run's main thread after every segment with the steps per chain so far and
  // the step target (0: none): progress for front ends without a terminal (notebooks).
  std::function<void(std::uint64_t steps, std::uint64_t target)> on_segment;
  std::string command_line;
};

struct ChainRunSummary {
  std::string path;
  int chains = 0;
  std::uint64_t steps = 0;          // per chain, whole run
  std::uint64_t session_steps = 0;  // per chain, this session
  std::uint64_t draws = 0;          // thinned draws per chain
  std::size_t checkpoints = 0;
  double seconds = 0;             // this session's wall time
  double checkpoint_seconds = 0;  // of which writing checkpoints
  // All chains, this session; with skip_rejections the steps, skipped rejections included.
  std::uint64_t session_proposals = 0;
  MoveCounts counts;                         // all chains, whole run
  std::vector<std::uint64_t> regenerations;  // per chain, whole run
  std::string stop_reason;                   // "steps", "max-time", "converged", "signal"
  int stop_signal = 0;
  bool convergence_checked = false;
  Verdict convergence;  // of the last check, against convergence_thresholds
  Thresholds convergence_thresholds;
  std::size_t convergence_checks = 0;  // this session
  // With teleports asked for: log10 of an upper bound of the posterior mass of their class D_k
  // (the cover engine's U against the best start score; NaN otherwise), and a note when that
  // bound is negligible (teleports will rarely or never be accepted).
  double teleport_mass_bound_log10 = std::numeric_limits<double>::quiet_NaN();
  std::string teleport_note;
  // All chains' proposals per second of this session (0 before any time passed).
  double proposals_per_second() const {
    return seconds > 0 ? double(session_proposals) / seconds : 0.0;
  }
  std::uint64_t total_regenerations() const;
};

// Creates `path` (or, with resume, continues the run in it) and runs until a stopping rule
// holds. Throws InputError for inconsistent options (naming the option).
//
// Under MPI with P > 1 ranks (src/core/mpi_context.hpp, docs/cluster.md) every rank calls
// this with the same arguments: rank r runs a block of the chains (still with the streams
// make_stream(seed, global chain)) and writes them to its member file (RUN.rank<r>.h5 beside
// `path`), rank 0 writes the manifest at `path`; stopping decisions (steps, time, signals,
// convergence) and checkpoints are collective, so every member ends at the same step. The
// summary describes the whole run on every rank.
ChainRunSummary run_chains(const ScoreTable& table, const std::string& path,
                           const ChainRunOptions& options, const ChainRunHooks& hooks, bool resume);

// The automatic choice of the block moves (docs/chains.md, "Block moves"): the largest block
// size m <= n whose block step is estimated to cost at most `max_step_seconds`, and the rate
// that gives block steps a `share` of the run time next to local moves and REV. From the
// engine's cost model, so the choice depends on the table alone (never on the machine's load):
// every rank and every rerun with the same seed chooses the same.
struct BlockSettings {
  int size = 0;
  double rate = 0;
};
BlockSettings choose_block_settings(const ScoreTable& table, double share = 0.5,
                                    double max_step_seconds = 0.02);
// Estimated seconds of one block step with m nodes in the table (engine passes, derived
// weights and one draw), and of one local or REV step.
double estimate_block_step_seconds(const ScoreTable& table, int m);
double estimate_local_step_seconds(const ScoreTable& table);

// Makes room for `extra` more elements at the end of `v`. When the capacity is short it at least
// doubles it, so a buffer that gets one segment of rows after another (the runner's draws
// between checkpoints) is reallocated O(log size) times rather than once per segment, which
// copied the whole buffer each time. Returns true when it reallocated.
template <class T>
bool reserve_for_append(std::vector<T>& v, std::size_t extra) {
  const std::size_t need = v.size() + extra;
  if (need <= v.capacity()) return false;
  v.reserve(std::max(need, 2 * v.capacity()));
  return true;
}

// Parses a duration: a number with an optional unit s, m, h or d ("90s", "10m", "2h", "1.5h",
// "45" = seconds). Throws InputError naming `option`.
double parse_duration(const std::string& text, const std::string& option);

// Reads a start DAG: one edge `from<TAB>to` per line with variable names ('#' lines and blank
// lines ignored; the edge-file format of docs/file-formats.md), as global parent words.
std::vector<std::uint64_t> read_start_dag(const std::string& path, const ScoreTable& table);

}  // namespace covey
