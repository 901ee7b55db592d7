#include "covey/chains/chain_runner.hpp"

#include "core/progress.hpp"

#include <tbb/parallel_for.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <ctime>
#include <filesystem>
#include <memory>

#include "block_move.hpp"
#include "chain_file_writer.hpp"
#include "chain_options_json.hpp"
#include "chain_start.hpp"
#include "core/mpi_context.hpp"
#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/random.hpp"
#include "covey/core/version.hpp"
#include "covey/data/edge_constraints.hpp"
#include "covey/graph/dag.hpp"

namespace covey {
namespace {

using Clock = std::chrono::steady_clock;

double seconds_since(Clock::time_point t) {
  return std::chrono::duration<double>(Clock::now() - t).count();
}

// Target wall time of one segment (all chains advance by the same number of steps, then the
// main thread checks signals, time, progress and checkpoints).
constexpr double kSegmentSeconds = 0.2;
// Thinned draws held in memory between checkpoints; past this a checkpoint is written early.
constexpr std::size_t kMaxPendingBytes = std::size_t{256} << 20;
// A checkpoint copies the whole file: it is spaced so that writing takes at most 1/20 of the
// time (a floor on the interval for large files).
constexpr double kMaxCheckpointShare = 0.05;
// The automatic spacing of the stopping rule's checks (docs/chains.md, "Stopping rules"): this
// share of the run's time so far, at least kMinCheckSeconds and at most the checkpoint interval;
// with a step limit also at every kCheckMilestones-th of the steps.
constexpr double kCheckShare = 0.1;
constexpr double kMinCheckSeconds = 10;
constexpr std::uint64_t kCheckMilestones = 10;
// Teleports into a class holding at most this share of the posterior (log10) are called useless.
constexpr double kNegligibleMassLog10 = -6;
// The stream of the greedy ascent that judges teleports: past any chain's id.
constexpr std::uint64_t kTeleportJudgeStream = std::uint64_t{1} << 62;

struct Slot {
  Slot(const ScoreTable& table, const ChainConfig& config) : chain(table, config) {}
  StructureChain chain;
  Rng rng;
  std::uint64_t regenerations = 0;
  chain_file::ChainBlock pending;  // rows since the last checkpoint
};

// The exact start draws from D_k, k = start_cover: a class of the cover engines (0 <= k < n)
// that lies inside the target's D_k' under cover_limit.
void check_start_cover(const ChainRunOptions& o, const ScoreTable& table) {
  const int n = table.num_variables();
  if (o.start_cover < 0 || o.start_cover >= n)
    throw OptionError("{start_cover} " + std::to_string(o.start_cover) +
                      " of {start} exact must be at least 0 and below the number of variables (" +
                      std::to_string(n) + ")");
  if (o.cover_limit >= 0 && o.start_cover > o.cover_limit)
    throw OptionError(
        "{start_cover} K must not exceed {cover_limit} K' (the start must lie in "
        "D_K')");
}

void check_options(const ChainRunOptions& o, const ChainRunHooks& hooks, const ScoreTable& table,
                   bool resume) {
  if (o.chains < 1) throw OptionError("{chains} must be at least 1");
  if (o.thin < 1) throw OptionError("{thin} must be at least 1");
  if (o.rev_rate < 0 || o.rev_rate > 1) throw OptionError("{rev_rate} must lie in [0, 1]");
  if (o.teleport_rate < 0 || o.teleport_rate > 1)
    throw OptionError("{teleport_rate} must lie in [0, 1]");
  if (o.rev_rate + o.teleport_rate > 1)
    throw OptionError("{rev_rate} plus {teleport_rate} must be at most 1");
  if (o.teleport_rate > 0 && o.teleport_cover < 0)
    throw OptionError("{teleport_rate} needs {teleport_cover} K (the class of the exact sampler)");
  if (o.start == "exact") check_start_cover(o, table);
  if (o.teleport_rate > 0 && !hooks.teleport) throw Error("run_chains: no teleport sampler given");
  if (o.start == "exact" && !resume && !hooks.start_sampler &&
      !(hooks.teleport && o.start_cover == o.teleport_cover))
    throw Error("run_chains: no sampler for the exact start given");
  if (o.cover_limit >= 0 && !hooks.restriction) throw Error("run_chains: no class given");
  if (o.teleport_cover >= 0 && o.cover_limit >= 0 && o.teleport_cover > o.cover_limit)
    throw OptionError("{teleport_cover} K must not exceed {cover_limit} K' (D_K must lie in D_K')");
  if (o.until_rhat < 0 || o.until_ess < 0)
    throw OptionError("{until_rhat} and {until_ess} must be positive");
  if (o.until_enabled() && !hooks.convergence) throw Error("run_chains: no convergence check");
  if (o.steps == 0 && o.max_seconds <= 0 && !o.until_enabled())
    throw OptionError(
        "give a stopping rule: {steps} N, {max_seconds} DURATION or {until_rhat} / {until_ess}");
  if (o.steps > 0 && o.burn_in >= o.steps)
    throw OptionError("{burn_in} " + std::to_string(o.burn_in) + " leaves no draws of {steps} " +
                      std::to_string(o.steps) + " (the burn-in must be shorter than the run)");
  if (o.checkpoint_every < 0) throw OptionError("{checkpoint_every} must be >= 0");
  if (o.check_every < 0) throw OptionError("{check_every} must be >= 0");
  check_block_options(o, table);
}

// A verdict as numbers, to send it from rank 0 to every rank, and back.
std::vector<double> verdict_numbers(const Verdict& v) {
  std::vector<double> out = {double(v.features), double(v.passing), double(v.failing),
                             double(v.undefined)};
  for (const Verdict::Counts* c : {&v.rhat, &v.ess_bulk, &v.ess_tail})
    out.insert(out.end(), {double(c->passing), double(c->failing), double(c->undefined)});
  out.insert(out.end(), {v.max_rhat, v.min_ess_bulk, v.min_ess_tail, double(int(v.state))});
  return out;
}

Verdict verdict_of_numbers(const std::vector<double>& x) {
  const auto count = [&](std::size_t i) { return static_cast<std::size_t>(x[i]); };
  Verdict v;
  v.features = count(0);
  v.passing = count(1);
  v.failing = count(2);
  v.undefined = count(3);
  std::size_t i = 4;
  for (Verdict::Counts* c : {&v.rhat, &v.ess_bulk, &v.ess_tail}) {
    *c = {count(i), count(i + 1), count(i + 2)};
    i += 3;
  }
  v.max_rhat = x[i];
  v.min_ess_bulk = x[i + 1];
  v.min_ess_tail = x[i + 2];
  v.state = static_cast<Verdict::State>(static_cast<int>(x[i + 3]));
  return v;
}

std::string percent(std::uint64_t a, std::uint64_t p) {
  if (p == 0) return "-";
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.1f%%", 100.0 * double(a) / double(p));
  return buf;
}

std::string human(double x) {
  char buf[32];
  if (x >= 1e9)
    std::snprintf(buf, sizeof buf, "%.2fG", x / 1e9);
  else if (x >= 1e6)
    std::snprintf(buf, sizeof buf, "%.2fM", x / 1e6);
  else if (x >= 1e3)
    std::snprintf(buf, sizeof buf, "%.1fk", x / 1e3);
  else
    std::snprintf(buf, sizeof buf, "%.0f", x);
  return buf;
}

class Runner {
 public:
  Runner(const ScoreTable& table, const std::string& path, const ChainRunOptions& options,
         const ChainRunHooks& hooks)
      : table_(table), path_(path), member_(path), o_(options), hooks_(hooks) {
    rank_ = mpi::rank();
    ranks_ = mpi::size();
    if (ranks_ > 1) {
      if (o_.chains < ranks_)
        throw OptionError("{chains} " + std::to_string(o_.chains) + " is fewer than the " +
                          std::to_string(ranks_) +
                          " MPI ranks; give every rank at least one chain");
      member_ = chain_file::member_path(path_, rank_);
    }
    // Rank r runs the block [first_chain(r), first_chain(r + 1)) of the chains.
    first_ = first_chain(rank_);
    local_ = first_chain(rank_ + 1) - first_;
    if (rank_ != 0 || !Progress::stderr_is_terminal()) hooks_.progress = false;
    width_ = std::size_t(table.num_variables()) * Dag::words_for(table.num_variables());
    config_.rev_rate = o_.rev_rate;
    config_.teleport_rate = o_.teleport_rate;
    config_.teleport = o_.teleport_rate > 0 ? hooks.teleport : nullptr;
    config_.restriction = o_.cover_limit >= 0 ? hooks.restriction : nullptr;
    config_.block_rate = o_.block_rate;
    config_.block_size = o_.block_size;
    config_.skip_rejections = o_.skip_rejections;
    if (o_.block_size > 0 && o_.block_size < table.num_variables())
      config_.block_family = strongest_neighbour_blocks(table, o_.block_size);
    session_ = {{"command_line", hooks.command_line},
                {"covey_version", kVersion},
                {"unix_time", static_cast<long long>(std::time(nullptr))}};
  }

  void start_new() {
    chain_file::remove_stale_temporaries(member_);
    std::vector<std::uint64_t> file_start;
    if (o_.start != "empty" && o_.start != "exact" && o_.start != "greedy")
      file_start = read_start_dag(o_.start, table_);
    const TeleportSource* exact_start = nullptr;
    if (o_.start == "exact")
      exact_start = hooks_.start_sampler ? &hooks_.start_sampler() : hooks_.teleport;
    for (int c = 0; c < local_; ++c) {
      auto slot = std::make_unique<Slot>(table_, config_);
      // The stream of the global chain: the trace does not depend on which rank runs it.
      slot->rng = make_stream(o_.seed, static_cast<std::uint64_t>(first_ + c));
      if (o_.start == "empty") {
        if (!slot->chain.empty_graph_allowed())
          throw OptionError(
              "{start} empty: the score table does not allow the empty graph "
              "(required edges?); use {start} exact or {start} FILE");
      } else if (o_.start == "greedy") {
        // From the chain's own stream: every chain climbs from its own random node order.
        slot->chain.set_parents(greedy_start(table_, slot->rng, config_.restriction),
                                "greedy start");
      } else if (o_.start == "exact") {
        // The chain's own stream makes its first state an exact draw from D_k. From the
        // teleports' class it is a regeneration at step 0 (the state every accepted teleport
        // leaves: an independent draw of w restricted to D_k).
        slot->chain.set_dag(exact_start->draw(slot->rng), "exact start draw");
        if (o_.start_cover == o_.teleport_cover) {
          slot->pending.regenerations.push_back(0);
          slot->regenerations = 1;
        }
      } else {
        slot->chain.set_parents(file_start, o_.start);
      }
      slots_.push_back(std::move(slot));
    }
    steps_ = 0;
    judge_teleports();
    chain_file::Header header;
    header.variables = variable_names(table_.variables());
    header.fingerprint = table_.fingerprint();
    header.words_per_node = Dag::words_for(table_.num_variables());
    header.num_chains = local_;
    for (int c = 0; c < local_; ++c) header.global_chains.push_back(first_ + c);
    if (ranks_ > 1) {
      header.mpi_rank = rank_;
      header.mpi_ranks = ranks_;
    }
    header.options = fixed_options_to_json(o_);
    session_["start_step"] = 0;
    header.session = session_;
    const auto t = Clock::now();
    chain_file::create(member_, header, blocks(), 0, 0.0);
    if (ranks_ > 1) {
      // The manifest only once every member exists.
      mpi::barrier();
      if (rank_ == 0) {
        std::vector<std::string> members;
        std::vector<std::vector<int>> chains(ranks_);
        for (int r = 0; r < ranks_; ++r) {
          members.push_back(chain_file::member_path(path_, r));
          for (int c = first_chain(r); c < first_chain(r + 1); ++c) chains[r].push_back(c);
        }
        chain_file::write_manifest(path_, members, chains, header);
      }
    }
    checkpoint_seconds_ += seconds_since(t);
    clear_pending();
    checkpoints_ = 1;
    session_recorded_ = true;
  }

  // Whether D_k can hold enough of the posterior for teleports to be accepted: P(D_k | data) =
  // Z_k / Z <= U / w(G) for any DAG G of the table, so the cover engine's log U against the best
  // score among the starts and a greedy ascent bounds the mass from above (no estimate needed).
  // Stored in the session record of the run file and said once on the terminal when negligible.
  // Under a cover limit the target is the posterior within D_k'; when D_k' lies inside the
  // teleports' D_k, every state is inside and the question does not arise. Otherwise the bound
  // holds for any DAG of D_k', so only the chains' own states (inside D_k') set the level.
  void judge_teleports() {
    if (o_.teleport_rate <= 0 || !hooks_.teleport) return;
    if (o_.cover_limit >= 0 && o_.cover_limit <= o_.teleport_cover) {
      teleport_mass_bound_log10_ = 0;  // D_k holds the whole target
      session_["teleport_mass_bound_log10"] = 0.0;
      return;
    }
    double level = -std::numeric_limits<double>::infinity();
    for (const auto& s : slots_) level = std::max(level, s->chain.log_score());
    if (o_.cover_limit < 0) {
      // A stream of its own (past every chain's), so the chains' trajectories are unchanged.
      Rng rng = make_stream(o_.seed, kTeleportJudgeStream);
      StructureChain probe(table_, ChainConfig{});
      probe.set_parents(greedy_start(table_, rng), "greedy ascent");
      level = std::max(level, probe.log_score());
    }
    const double bound_log10 = (hooks_.teleport->log_class_weight_bound() - level) / std::log(10.0);
    teleport_mass_bound_log10_ = bound_log10;
    session_["teleport_mass_bound_log10"] = bound_log10;
    if (bound_log10 >= kNegligibleMassLog10) return;
    char text[320];
    std::snprintf(text, sizeof text,
                  "teleports: D_%d holds at most 10^%.1f of the posterior mass (the cover engine's "
                  "total weight against the best score found), so teleports will rarely or never "
                  "be accepted; block moves (--block-size, on by default) bring the exact engine "
                  "into the chain instead",
                  o_.teleport_cover, bound_log10);
    teleport_note_ = text;
    session_["teleport_note"] = teleport_note_;
    if (rank_ == 0) std::fprintf(stderr, "covey: note: %s\n", text);
  }

  void resume() {
    if (is_run_manifest(path_)) {
      const RunManifest m = read_run_manifest(path_);
      if (static_cast<int>(m.members.size()) != ranks_)
        throw InputError(path_ + ": the run was made by " + std::to_string(m.members.size()) +
                         " MPI ranks; resume it with mpirun -np " +
                         std::to_string(m.members.size()));
      if (m.num_chains != o_.chains) throw Error("run_chains: chain count differs from manifest");
      member_ = run_member_files(path_)[std::size_t(rank_)];
    } else if (ranks_ > 1) {
      throw InputError(path_ + ": not the manifest of an MPI run (the run was made by one " +
                       "process; resume it without mpirun)");
    }
    chain_file::remove_stale_temporaries(member_);
    const ChainRun run = ChainRun::open(member_);
    run.check_table(table_);
    std::vector<int> expected;
    for (int c = 0; c < local_; ++c) expected.push_back(first_ + c);
    if (run.num_chains() != local_ || run.global_chains() != expected)
      throw InputError(member_ + ": holds chains " + nlohmann::json(run.global_chains()).dump() +
                       ", not the chains " + nlohmann::json(expected).dump() + " of rank " +
                       std::to_string(rank_));
    steps_ = run.steps();
    draws_ = run.num_draws();
    checkpoints_ = run.num_checkpoints();
    prior_elapsed_ = run.elapsed_seconds();
    for (int c = 0; c < local_; ++c) {
      const ChainCheckpoint cp = run.checkpoint(c);
      auto slot = std::make_unique<Slot>(table_, config_);
      slot->chain.set_parents(cp.parents,
                              member_ + ": checkpoint state of chain " + std::to_string(c));
      slot->chain.set_counts(cp.counts);
      if (o_.skip_rejections) slot->chain.set_skip_wait(cp.skip_wait);
      slot->rng = load_stream(cp.rng_state);
      slot->regenerations = cp.regenerations;
      slots_.push_back(std::move(slot));
    }
    session_["start_step"] = steps_;
    session_recorded_ = false;
    // A rank killed during a checkpoint can leave the members one checkpoint apart: the ranks
    // behind first run up to the furthest member's step (a chain's trajectory depends only on
    // its step count, so this is the same as having checkpointed there) and checkpoint.
    std::vector<double> furthest{double(steps_)};
    mpi::allreduce_max(furthest);
    const auto target = static_cast<std::uint64_t>(furthest[0]);
    if (steps_ < target) {
      run_segment(target - steps_);
      steps_ = target;
      write_checkpoint(prior_elapsed_);
    }
  }

  ChainRunSummary run() {
    const auto session_start = Clock::now();
    Progress progress("chain", hooks_.progress);
    MoveCounts at_start_local;
    for (const auto& s : slots_) at_start_local += s->chain.counts();
    const std::uint64_t steps_at_start = steps_;
    std::uint64_t segment = 1000;
    auto last_checkpoint = Clock::now();
    double interval = o_.checkpoint_every;
    // The stopping rule has its own schedule (check_interval, step milestones) besides the
    // checkpoints. A check first writes a checkpoint: the diagnostics judge every draw of the
    // run, most of which are only in the file (and over MPI in other ranks' files, which rank 0
    // reads), and a checkpoint never changes a chain's trajectory.
    auto last_check = Clock::now();
    double check_every = check_interval(prior_elapsed_, 0);
    std::uint64_t milestone = next_milestone();
    std::uint64_t draws_checked = 0;
    std::string reason;
    ChainRunSummary summary;
    summary.convergence_thresholds = stopping_thresholds(o_);
    const auto judge_draws = [&] {
      summary.convergence = check_convergence();
      summary.convergence_checked = true;
      ++summary.convergence_checks;
      draws_checked = draws_;
    };

    if (o_.steps > 0 && steps_ >= o_.steps) reason = "steps";
    while (reason.empty()) {
      std::uint64_t len = o_.steps > 0 ? std::min(segment, o_.steps - steps_) : segment;
      // Segments end on the milestones, so that a run checks at the same steps every time.
      if (milestone > steps_) len = std::min(len, milestone - steps_);
      const auto t0 = Clock::now();
      run_segment(len);
      const double took = seconds_since(t0);
      steps_ += len;
      if (hooks_.on_segment) hooks_.on_segment(steps_, o_.steps);
      // Segment length for about kSegmentSeconds (does not affect the trajectories).
      const double factor = std::clamp(kSegmentSeconds / std::max(took, 1e-6), 0.25, 4.0);
      const auto next =
          std::max<std::uint64_t>(100, static_cast<std::uint64_t>(double(len) * factor));

      // Every decision is collective: the ranks combine their signal, clock, checkpoint due
      // and segment length (the slowest rank's) so that all take the same branch at the same
      // step (a no-op with one rank).
      std::vector<double> shared{
          hooks_.stop_signal ? double(hooks_.stop_signal->load()) : 0.0,
          seconds_since(session_start),
          seconds_since(last_checkpoint) >= interval || pending_bytes() > kMaxPendingBytes ? 1.0
                                                                                           : 0.0,
          -double(next), check_due(last_check, check_every, milestone) ? 1.0 : 0.0};
      mpi::allreduce_max(shared);
      segment = static_cast<std::uint64_t>(-shared[3]);
      if (shared[0] != 0) {
        reason = "signal";
        summary.stop_signal = static_cast<int>(shared[0]);
      } else if (o_.steps > 0 && steps_ >= o_.steps) {
        reason = "steps";
      } else if (o_.max_seconds > 0 && shared[1] >= o_.max_seconds) {
        reason = "max-time";
      }
      // The rule is checked on its own schedule and after every checkpoint.
      const bool check = o_.until_enabled() && reason.empty() && (shared[4] != 0 || shared[2] != 0);
      const bool due = shared[2] != 0 || check;
      double cost = 0;  // of this checkpoint and check
      if (due || !reason.empty()) {
        const auto tc = Clock::now();
        write_checkpoint(prior_elapsed_ + seconds_since(session_start));
        const double write_time = seconds_since(tc);
        checkpoint_seconds_ += write_time;
        // Spaced by the slowest rank's write (the largest member file).
        std::vector<double> slowest{write_time};
        mpi::allreduce_max(slowest);
        interval = std::max(o_.checkpoint_every, slowest[0] / kMaxCheckpointShare);
        last_checkpoint = Clock::now();
        cost = slowest[0];
      }
      if (check) {
        const auto tj = Clock::now();
        judge_draws();
        if (summary.convergence.converged()) reason = "converged";
        check_every =
            check_interval(prior_elapsed_ + seconds_since(session_start), cost + seconds_since(tj));
        last_check = Clock::now();
        milestone = next_milestone();
      }
      if (hooks_.progress) show_progress(progress, session_start, steps_at_start);
    }
    progress.finish();
    // The summary judges every draw: once more when draws came after the last check (not when
    // a signal asks to stop quickly).
    if (o_.until_enabled() && draws_ > draws_checked && (reason != "signal" || draws_checked == 0))
      judge_draws();

    summary.path = path_;
    summary.chains = o_.chains;
    summary.steps = steps_;
    summary.session_steps = steps_ - steps_at_start;
    summary.draws = draws_;
    summary.checkpoints = checkpoints_;
    summary.seconds = seconds_since(session_start);
    summary.checkpoint_seconds = checkpoint_seconds_;
    // Counts of the whole run: every rank's chains (sums over the ranks).
    std::vector<std::uint64_t> totals(2 * kNumMoves + 1 + std::size_t(o_.chains), 0);
    MoveCounts local;
    for (std::size_t c = 0; c < slots_.size(); ++c) {
      local += slots_[c]->chain.counts();
      totals[2 * kNumMoves + 1 + std::size_t(first_) + c] = slots_[c]->regenerations;
    }
    for (int m = 0; m < kNumMoves; ++m) {
      totals[2 * m] = local.proposed[m];
      totals[2 * m + 1] = local.accepted[m];
    }
    // Effective proposals: with rejection skipping the skipped rejections are steps that the
    // move counts (evaluated proposals only) leave out; without it every step is one proposal.
    totals[2 * kNumMoves] = o_.skip_rejections
                                ? slots_.size() * summary.session_steps
                                : local.total_proposed() - at_start_local.total_proposed();
    mpi::allreduce_sum(totals);
    for (int m = 0; m < kNumMoves; ++m) {
      summary.counts.proposed[m] = totals[2 * m];
      summary.counts.accepted[m] = totals[2 * m + 1];
    }
    summary.regenerations.assign(totals.begin() + 2 * kNumMoves + 1, totals.end());
    summary.session_proposals = totals[2 * kNumMoves];
    summary.stop_reason = reason;
    summary.teleport_mass_bound_log10 = teleport_mass_bound_log10_;
    summary.teleport_note = teleport_note_;
    return summary;
  }

 private:
  void run_segment(std::uint64_t len) {
    const std::uint64_t first = steps_ + 1, last = steps_ + len;
    // Thinned rows kept in (first..last]: steps s > burn_in with s % thin == 0.
    const std::uint64_t lo = std::max(first, o_.burn_in + 1);
    const std::uint64_t rows = last >= lo ? last / o_.thin - (lo - 1) / o_.thin : 0;
    tbb::parallel_for(std::size_t{0}, slots_.size(), [&](std::size_t c) {
      Slot& s = *slots_[c];
      auto& p = s.pending;
      reserve_for_append(p.draws, rows * width_);
      reserve_for_append(p.log_scores, rows);
      reserve_for_append(p.draw_steps, rows);
      if (o_.skip_rejections) {
        run_skipping(s, first, last);
        return;
      }
      for (std::uint64_t step = first; step <= last; ++step) {
        if (s.chain.step(s.rng)) {
          p.regenerations.push_back(static_cast<std::int64_t>(step));
          ++s.regenerations;
        }
        if (step % o_.thin == 0 && step > o_.burn_in) record(s, step);
      }
    });
  }

  void record(Slot& s, std::uint64_t step) const {
    auto& p = s.pending;
    const std::size_t at = p.draws.size();
    p.draws.resize(at + width_);
    s.chain.write_parents(p.draws.data() + at);
    p.log_scores.push_back(s.chain.log_score());
    p.draw_steps.push_back(static_cast<std::int64_t>(step));
  }

  // Steps first..last of one chain with rejection skipping (docs/chains.md, "Rejection
  // skipping"): the quiet steps before each event repeat the state, so every thin-th of them
  // records it as the plain chain would; a wait past `last` stays with the chain for the next
  // segment (and in the checkpoint), so segment ends, set by the clock, and resumes leave the
  // trajectory unchanged.
  void run_skipping(Slot& s, std::uint64_t first, std::uint64_t last) const {
    for (std::uint64_t step = first; step <= last;) {
      const std::uint64_t quiet = s.chain.quiet_steps(s.rng, last - step + 1);
      const std::uint64_t lo = std::max(step, o_.burn_in + 1);
      const std::uint64_t end = step + quiet;  // the quiet steps are [step, end)
      for (std::uint64_t t = (lo + o_.thin - 1) / o_.thin * o_.thin; t < end; t += o_.thin)
        record(s, t);
      step = end;
      if (step > last) break;
      if (s.chain.event_step(s.rng)) {
        s.pending.regenerations.push_back(static_cast<std::int64_t>(step));
        ++s.regenerations;
      }
      if (step % o_.thin == 0 && step > o_.burn_in) record(s, step);
      ++step;
    }
  }

  std::vector<chain_file::ChainBlock> blocks() {
    std::vector<chain_file::ChainBlock> out;
    for (auto& s : slots_) {
      chain_file::ChainBlock b;
      b.draws = std::move(s->pending.draws);
      b.log_scores = std::move(s->pending.log_scores);
      b.draw_steps = std::move(s->pending.draw_steps);
      b.regenerations = std::move(s->pending.regenerations);
      b.state.steps = steps_;
      b.state.parents = s->chain.parents_words();
      b.state.rng_state = save_stream(s->rng);
      b.state.counts = s->chain.counts();
      b.state.regenerations = s->regenerations;
      b.state.skip_wait = s->chain.skip_wait();
      out.push_back(std::move(b));
    }
    return out;
  }

  void clear_pending() {
    for (auto& s : slots_) {
      s->pending.draws.clear();
      s->pending.log_scores.clear();
      s->pending.draw_steps.clear();
      s->pending.regenerations.clear();
    }
  }

  std::size_t pending_bytes() const {
    std::size_t b = 0;
    for (const auto& s : slots_)
      b += s->pending.draws.size() * 8 + s->pending.log_scores.size() * 16;
    return b;
  }

  void write_checkpoint(double elapsed) {
    auto b = blocks();
    const std::uint64_t added = b.empty() ? 0 : b[0].log_scores.size();
    chain_file::append_checkpoint(member_, b, steps_, elapsed,
                                  session_recorded_ ? nullptr : &session_);
    session_recorded_ = true;
    draws_ += added;
    ++checkpoints_;
    clear_pending();
  }

  // Seconds to the next check of the stopping rule after one that took `cost` seconds (with its
  // checkpoint), `run_seconds` into the run: check_every, or kCheckShare of the run so far within
  // [kMinCheckSeconds, checkpoint_every]; never so often that checks take more than
  // kMaxCheckpointShare of the time.
  double check_interval(double run_seconds, double cost) const {
    const double automatic = std::clamp(kCheckShare * run_seconds, kMinCheckSeconds,
                                        std::max(kMinCheckSeconds, o_.checkpoint_every));
    return std::max(o_.check_every > 0 ? o_.check_every : automatic, cost / kMaxCheckpointShare);
  }

  // The next step milestone after steps_ at which the stopping rule is checked (every
  // kCheckMilestones-th of the step limit); 0: none (no step limit or no stopping rule).
  std::uint64_t next_milestone() const {
    if (!o_.until_enabled() || o_.steps == 0) return 0;
    const std::uint64_t spacing = std::max<std::uint64_t>(1, o_.steps / kCheckMilestones);
    const std::uint64_t next = (steps_ / spacing + 1) * spacing;
    return next < o_.steps ? next : 0;  // the last check comes with the stop at o_.steps
  }

  bool check_due(Clock::time_point last_check, double check_every, std::uint64_t milestone) const {
    if (!o_.until_enabled()) return false;
    return seconds_since(last_check) >= check_every || (milestone > 0 && steps_ >= milestone);
  }

  // Collective over MPI: after every rank's checkpoint, rank 0 reads all members (the files
  // are on a folder every rank can reach, as the manifest requires), judges all chains' draws
  // together exactly as one process would, and sends the verdict to every rank.
  Verdict check_convergence() {
    const Thresholds thresholds = stopping_thresholds(o_);
    if (ranks_ == 1) return hooks_.convergence(RunFeatures(ChainRun::open(path_)), thresholds);
    mpi::barrier();
    std::vector<double> numbers = verdict_numbers(Verdict{});
    if (rank_ == 0) {
      std::vector<ChainRun> runs;
      for (int r = 0; r < ranks_; ++r)
        runs.push_back(ChainRun::open(chain_file::member_path(path_, r)));
      numbers = verdict_numbers(hooks_.convergence(RunFeatures(runs), thresholds));
    }
    mpi::broadcast(numbers);
    return verdict_of_numbers(numbers);
  }

  void show_progress(Progress& progress, Clock::time_point start, std::uint64_t steps_at_start) {
    MoveCounts total;
    std::uint64_t regen = 0;
    for (const auto& s : slots_) {
      total += s->chain.counts();
      regen += s->regenerations;
    }
    // Rank 0 shows its own chains' rate times the ranks (every rank runs as many steps).
    const double rate = double(steps_ - steps_at_start) * double(local_) * double(ranks_) /
                        std::max(seconds_since(start), 1e-9);
    std::string status = human(rate) + " steps/s  accept";
    for (int m = 0; m < kNumMoves; ++m)
      if (total.proposed[m])
        status +=
            std::string(" ") + move_name(m) + " " + percent(total.accepted[m], total.proposed[m]);
    if (o_.teleport_rate > 0 || o_.start == "exact")
      status += "  regenerations " + std::to_string(regen);
    status += "  step " + human(double(steps_));
    progress.update(double(steps_), o_.steps > 0 ? double(o_.steps) : 0.0, status);
  }

  int first_chain(int rank) const {
    return static_cast<int>(std::int64_t(rank) * o_.chains / ranks_);
  }

  const ScoreTable& table_;
  std::string path_;    // the -o path: the run file, or the manifest of an MPI run
  std::string member_;  // the run file this rank writes (path_ with one rank)
  int rank_ = 0, ranks_ = 1, first_ = 0, local_ = 0;
  ChainRunOptions o_;
  ChainRunHooks hooks_;
  ChainConfig config_;
  std::size_t width_ = 0;
  std::vector<std::unique_ptr<Slot>> slots_;
  std::uint64_t steps_ = 0, draws_ = 0;
  std::size_t checkpoints_ = 0;
  double prior_elapsed_ = 0, checkpoint_seconds_ = 0;
  nlohmann::json session_;
  bool session_recorded_ = false;
  double teleport_mass_bound_log10_ = std::numeric_limits<double>::quiet_NaN();
  std::string teleport_note_;
};

}  // namespace

std::uint64_t ChainRunSummary::total_regenerations() const {
  std::uint64_t total = 0;
  for (const std::uint64_t r : regenerations) total += r;
  return total;
}

ChainRunSummary run_chains(const ScoreTable& table, const std::string& path,
                           const ChainRunOptions& options, const ChainRunHooks& hooks,
                           bool resume) {
  if (table.num_variables() < 2)
    throw InputError("a chain needs a score table of at least two variables; this one has " +
                     std::to_string(table.num_variables()));
  // A resumed run keeps the fixed options it was made with (resume_options tells whether the
  // caller asked for others); only the session's options come from `options`.
  ChainRunOptions o = resume ? resume_options(path, options, {}) : with_default_choices(options);
  if (!resume && (o.block_size < 0 || o.block_rate < 0)) {
    const BlockSettings chosen = choose_block_settings(table);
    if (o.block_size < 0) o.block_size = chosen.size;
    if (o.block_rate < 0)
      o.block_rate =
          o.block_size == chosen.size ? chosen.rate : choose_block_rate(table, o.block_size);
    // What REV and teleports leave.
    o.block_rate = std::min(o.block_rate, std::max(0.0, 1 - o.rev_rate - o.teleport_rate));
    if (o.block_size == 0) o.block_rate = 0;
  }
  check_options(o, hooks, table, resume);
  if (!resume) {
    // A start file is read before the output is judged, so its faults are told first.
    if (o.start != "empty" && o.start != "exact" && o.start != "greedy")
      (void)read_start_dag(o.start, table);
    if (options.overwrite || !std::filesystem::exists(path))
      require_output_path(path);
    else
      throw OptionError(path + ": exists; {overwrite} replaces it and {resume} continues the run");
  }
  Runner runner(table, path, o, hooks);
  if (resume)
    runner.resume();
  else
    runner.start_new();
  return runner.run();
}

double parse_duration(const std::string& text, const std::string& option) {
  std::size_t used = 0;
  double value = 0;
  try {
    value = std::stod(text, &used);
  } catch (const std::exception&) {
    used = 0;
  }
  const std::string unit = text.substr(used);
  double scale = 0;
  if (used > 0) {
    if (unit.empty() || unit == "s")
      scale = 1;
    else if (unit == "m" || unit == "min")
      scale = 60;
    else if (unit == "h")
      scale = 3600;
    else if (unit == "d")
      scale = 86400;
  }
  if (scale == 0 || !(value > 0) || !std::isfinite(value))
    throw InputError(option + ": '" + text + "' is not a duration (examples: 90s, 10m, 2h, 1.5d)");
  return value * scale;
}

std::vector<std::uint64_t> read_start_dag(const std::string& path, const ScoreTable& table) {
  const int n = table.num_variables();
  const int words = Dag::words_for(n);
  std::vector<std::uint64_t> out(std::size_t(n) * words, 0);
  for (const Edge& e : read_edge_file(path, table.variables()))
    out[std::size_t(e.to) * words + (e.from >> 6)] |= std::uint64_t{1} << (e.from & 63);
  return out;
}

}  // namespace covey
