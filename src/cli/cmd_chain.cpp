// `covey chain`: the hybrid structure MCMC (local moves, REV, teleports from the exact
// cover-bounded sampler), several chains in parallel, traces in one HDF5 run file with
// checkpoints and bit-for-bit resume (docs/chains.md, docs/file-formats.md "Chain runs").
#include <cmath>
#include <csignal>
#include <cstdio>
#include <iostream>
#include <utility>

#include "command.hpp"
#include "common.hpp"
#include "core/mpi_context.hpp"
#include "covey/analysis/check.hpp"
#include "covey/chains/chain_runner.hpp"
#include "covey/chains/chain_support.hpp"
#include "covey/core/error.hpp"
#include "covey/scores/score_io.hpp"

namespace covey::cli {
namespace {

struct ChainArgs {
  std::string scores, output;
  int chains = 4;
  std::string steps, thin = "1000", burn_in = "0";
  std::uint64_t seed = 1;
  int threads = 0;
  int teleport_cover = -1;
  double teleport_rate = -1;  // -1: 0.01 with --teleport-cover, else 0
  double rev_rate = 1.0 / 15;
  int cover_limit = -1;
  std::string start;       // default: exact with --teleport-cover, else greedy
  int start_cover = -1;    // k of --start exact; -1: --teleport-cover, else kDefaultStartCover
  int block_size = -1;     // -1: chosen from the cost model when the run is created
  double block_rate = -1;  // -1: chosen so block steps take about half the time
  std::string checkpoint_every = "5m";
  std::string check_every;  // "": automatic
  std::string max_time;
  double until_rhat = 0, until_ess = 0;
  std::string sampler;       // saved cover sampler for --teleport-cover
  std::string memory_limit;  // ceiling of the teleport sampler's memory
  bool resume = false, json = false, force = false;
  bool skip_rejections = false;
};

std::atomic<int> g_stop_signal{0};
extern "C" void on_stop_signal(int signo) {
  g_stop_signal.store(signo);
}

// Installs SIGINT/SIGTERM handlers for the run and restores the previous ones afterwards.
class StopSignals {
 public:
  StopSignals() {
    struct sigaction sa {};
    sa.sa_handler = on_stop_signal;
    sigemptyset(&sa.sa_mask);
    sigaction(SIGINT, &sa, &old_int_);
    sigaction(SIGTERM, &sa, &old_term_);
  }
  ~StopSignals() {
    sigaction(SIGINT, &old_int_, nullptr);
    sigaction(SIGTERM, &old_term_, nullptr);
  }

 private:
  struct sigaction old_int_ {
  }, old_term_{};
};

// The stopping rule's verdict with the counts and wording of `check`'s (cmd_check.cpp); min_ess
// is the smaller of the bulk and tail minima.
nlohmann::json convergence_json(const ChainRunSummary& s) {
  const Verdict& v = s.convergence;
  const auto counts = [](const Verdict::Counts& c) {
    return nlohmann::json{
        {"passing", c.passing}, {"failing", c.failing}, {"undefined", c.undefined}};
  };
  const VerdictText text = stopping_verdict_text(s);
  return {
      {"converged", v.converged()},
      {"state", to_string(v.state)},
      {"max_rhat", json_number(v.max_rhat)},
      {"min_ess", json_number(std::fmin(v.min_ess_bulk, v.min_ess_tail))},
      {"min_ess_bulk", json_number(v.min_ess_bulk)},
      {"min_ess_tail", json_number(v.min_ess_tail)},
      {"thresholds",
       {{"rhat", s.convergence_thresholds.max_rhat}, {"ess", s.convergence_thresholds.min_ess}}},
      {"features", v.features},
      {"passing", v.passing},
      {"failing", v.failing},
      {"undefined", v.undefined},
      {"rhat", counts(v.rhat)},
      {"ess_bulk", counts(v.ess_bulk)},
      {"ess_tail", counts(v.ess_tail)},
      {"checks", s.convergence_checks},
      {"text", text.outcome},
      {"caveats", text.caveats}};
}

// The summary for --json (docs/cli.md lists the fields).
nlohmann::json summary_json(const ChainRunSummary& s) {
  nlohmann::json acceptance = nlohmann::json::object(), proposals = nlohmann::json::object(),
                 accepted = nlohmann::json::object();
  for (int m = 0; m < kNumMoves; ++m) {
    proposals[move_name(m)] = s.counts.proposed[m];
    accepted[move_name(m)] = s.counts.accepted[m];
    acceptance[move_name(m)] =
        s.counts.proposed[m]
            ? json_number(double(s.counts.accepted[m]) / double(s.counts.proposed[m]))
            : nlohmann::json(nullptr);
  }
  nlohmann::json out = {{"output", s.path},
                        {"chains", s.chains},
                        {"steps", s.steps},
                        {"session_steps", s.session_steps},
                        {"draws", s.draws},
                        {"checkpoints", s.checkpoints},
                        {"seconds", s.seconds},
                        {"checkpoint_seconds", s.checkpoint_seconds},
                        {"proposals_per_second", s.proposals_per_second()},
                        {"acceptance", acceptance},
                        {"proposals", proposals},
                        {"accepted", accepted},
                        {"teleport_acceptance", acceptance[move_name(int(Move::kTeleport))]},
                        {"regenerations", s.total_regenerations()},
                        {"regenerations_per_chain", s.regenerations},
                        {"stop_reason", s.stop_reason}};
  if (s.convergence_checked) out["convergence"] = convergence_json(s);
  if (!std::isnan(s.teleport_mass_bound_log10))
    out["teleport_mass_bound_log10"] = s.teleport_mass_bound_log10;
  if (!s.teleport_note.empty()) out["teleport_note"] = s.teleport_note;
  return out;
}

void print_text(const ChainRunSummary& s) {
  char line[256];
  std::snprintf(line, sizeof line,
                "%s: %d chains, %llu steps each (%llu this session, %.1f s, %.3g proposals/s)\n",
                s.path.c_str(), s.chains, (unsigned long long)s.steps,
                (unsigned long long)s.session_steps, s.seconds, s.proposals_per_second());
  std::cout << line;
  std::cout << "draws per chain: " << s.draws << ", checkpoints: " << s.checkpoints
            << ", stopped by: " << s.stop_reason << "\n";
  std::cout << "acceptance:";
  for (int m = 0; m < kNumMoves; ++m) {
    if (!s.counts.proposed[m]) continue;
    std::snprintf(line, sizeof line, " %s %.2f%% (%llu)", move_name(m),
                  100.0 * double(s.counts.accepted[m]) / double(s.counts.proposed[m]),
                  (unsigned long long)s.counts.proposed[m]);
    std::cout << line;
  }
  std::cout << "\n";
  if (s.counts.proposed[int(Move::kTeleport)] || s.total_regenerations())
    std::cout << "regenerations: " << s.total_regenerations() << "\n";
  if (s.convergence_checked) {
    const VerdictText text = stopping_verdict_text(s);
    std::cout << "convergence: " << text.outcome << "\n";
    if (!text.measures.empty()) std::cout << "  " << text.measures << "\n";
    for (const std::string& caveat : text.caveats) std::cout << "  caveat: " << caveat << "\n";
  }
}

// The options fixed at creation, as given on the command line.
ChainRunOptions fixed_options_of(const ChainArgs& a) {
  ChainRunOptions o;
  o.chains = a.chains;
  o.thin = parse_count(a.thin, "--thin");
  o.burn_in = parse_count(a.burn_in, "--burn-in");
  o.seed = a.seed;
  o.teleport_cover = a.teleport_cover;
  o.teleport_rate = a.teleport_rate;
  o.rev_rate = a.rev_rate;
  o.cover_limit = a.cover_limit;
  o.start = a.start;
  o.start_cover = a.start_cover;
  o.block_size = a.block_size;
  o.block_rate = a.block_rate;
  o.skip_rejections = a.skip_rejections;
  return o;
}

void run_chain_command(CLI::App* cmd, const ChainArgs& a) {
  ChainRunOptions o = fixed_options_of(a);
  if (!a.steps.empty()) o.steps = parse_count(a.steps, "--steps");
  if (!a.max_time.empty()) o.max_seconds = parse_duration(a.max_time, "--max-time");
  o.checkpoint_every =
      a.checkpoint_every == "0" ? 0.0 : parse_duration(a.checkpoint_every, "--checkpoint-every");
  if (!a.check_every.empty()) o.check_every = parse_duration(a.check_every, "--check-every");
  o.until_rhat = a.until_rhat;
  o.until_ess = a.until_ess;
  o.overwrite = a.force;
  if (a.resume) {
    // The run keeps the options it was created with; repeating them is fine, changing is not.
    std::vector<std::string> given_fields;
    for (const char* field : fixed_option_fields())
      if (cmd->count(option_flag(field))) given_fields.emplace_back(field);
    o = resume_options(a.output, o, given_fields);
  } else {
    o = with_default_choices(o);
  }
  const auto thread_limit = apply_threads(a.threads);
  const std::uint64_t limit = memory_limit(a.memory_limit);
  const ScoreTable table = load_scores(a.scores);
  ChainSupport support(table, o, a.sampler, limit);
  ChainRunHooks hooks = support.hooks();
  hooks.stop_signal = &g_stop_signal;
  hooks.command_line = command_line();
  ChainRunSummary summary;
  {
    g_stop_signal.store(0);
    StopSignals signals;
    summary = run_chains(table, a.output, o, hooks, a.resume);
  }
  if (mpi::rank() != 0) return;  // rank 0 reports for the whole run
  if (summary.stop_reason == "signal")
    std::cerr << "covey chain: stopped by "
              << (summary.stop_signal == SIGINT ? "SIGINT" : "SIGTERM") << " at step "
              << summary.steps << "; checkpoint written to " << a.output
              << " (continue with --resume)\n";
  if (a.json)
    print_json(summary_json(summary));
  else
    print_text(summary);
}

void setup_chain(CLI::App& app) {
  auto* cmd = app.add_subcommand(
      "chain",
      "Hybrid structure MCMC: chains of local moves, REV, exact block moves and teleports from "
      "the exact cover-bounded sampler, written to an HDF5 run file with checkpoints and resume");
  auto a = std::make_shared<ChainArgs>();
  cmd->add_option("SCORES", a->scores, "score table (HDF5 or .tsv)")->required();
  cmd->add_option("-o,--output", a->output,
                  "HDF5 run file to create (or continue with --resume); under mpirun the "
                  "manifest, with the ranks' files RUN.rank<r>.h5 beside it (docs/cluster.md)")
      ->required();
  cmd->add_option("--chains", a->chains, "number of chains (default 4)");
  cmd->add_option("--steps", a->steps,
                  "total steps per chain (e.g. 1e7); on --resume, the new total (default: none; "
                  "a run needs --steps, --max-time or --until-rhat/--until-ess)");
  cmd->add_option("--thin", a->thin, "keep every t-th state (default 1000)");
  cmd->add_option("--burn-in", a->burn_in, "steps discarded at the start (default 0)");
  cmd->add_option("--seed", a->seed, "seed; chain c uses stream (seed, c) (default 1)");
  add_memory_limit_option(*cmd, a->memory_limit);
  add_threads_option(*cmd, a->threads);
  cmd->add_option("--teleport-cover", a->teleport_cover,
                  "k: teleport from the exact sampler of the cover-bounded class D_k (default: "
                  "none, no teleports)");
  cmd->add_option("--teleport-rate", a->teleport_rate,
                  "teleport probability per step (default 0.01 with --teleport-cover)");
  cmd->add_option("--sampler", a->sampler,
                  "load the D_k sampler of the teleports from FILE (saved by `covey draw "
                  "--save-sampler`) instead of building it (default: build it)");
  cmd->add_option("--rev-rate", a->rev_rate,
                  "probability per step of a REV move, the edge reversal with parent resampling "
                  "(default 1/15)");
  cmd->add_option("--cover-limit", a->cover_limit,
                  "k': restrict the target to the cover-bounded class D_k' (k' >= k; default: "
                  "none, all DAGs)");
  cmd->add_option("--block-size", a->block_size,
                  "m: nodes per exact block move, whose parent sets are redrawn jointly from "
                  "their exact conditional (default: the largest m whose step the cost model "
                  "puts under 20 ms, at most n; 0: no block moves; stored in the run file)");
  cmd->add_option("--block-rate", a->block_rate,
                  "probability per step of an exact block move (default: block steps take about "
                  "half the run time; stored in the run file)");
  cmd->add_flag("--skip-rejections", a->skip_rejections,
                "skip the rejected local moves by drawing the wait to the next evaluated one (the "
                "same chain in law, faster when most moves are rejected; default off; stored in "
                "the run file)");
  cmd->add_option("--start", a->start,
                  "greedy (each chain the best DAG of its own random node order; the default), "
                  "empty, exact (an exact draw from D_k per chain, k = --start-cover; default "
                  "with --teleport-cover) or a DAG FILE of from<TAB>to edge lines");
  cmd->add_option("--start-cover", a->start_cover,
                  "k of the class D_k that --start exact draws from (default: --teleport-cover, "
                  "else " +
                      std::to_string(kDefaultStartCover) +
                      "; without teleports from D_k its sampler is built for the starts alone, "
                      "within --memory-limit)");
  cmd->add_option("--checkpoint-every", a->checkpoint_every,
                  "time between checkpoints, e.g. 90s, 10m (default 5m)");
  cmd->add_flag("--resume", a->resume, "continue the run in -o FILE from its last checkpoint");
  add_force_option(*cmd, a->force);
  cmd->add_option("--until-rhat", a->until_rhat,
                  "stop when every edge feature has R-hat below R (default 1.01 with --until-ess)");
  cmd->add_option("--until-ess", a->until_ess,
                  "... and bulk and tail ESS above E (default 400 with --until-rhat)");
  cmd->add_option("--check-every", a->check_every,
                  "time between checks of --until-rhat/--until-ess, e.g. 30s, 2m (default: 10% "
                  "of the run time so far, at least 10s and at most --checkpoint-every; also "
                  "after every checkpoint and, with --steps, at every tenth of the steps)");
  cmd->add_option("--max-time", a->max_time,
                  "stop after this wall time (a duration such as 90s, 10m, 2h; default: none)");
  cmd->add_flag("--json", a->json, "print the summary as JSON");
  cmd->callback([cmd, a] {
    // Under mpirun every rank runs this command (docs/cluster.md); without a launcher the
    // session is a no-op and the run is the single-process one.
    mpi::Session session;
    if (mpi::size() == 1) return run_chain_command(cmd, *a);
    try {
      run_chain_command(cmd, *a);
    } catch (const std::exception& e) {
      // One rank's error must end the job: the others would wait in a collective forever.
      std::cerr << "covey: error: " << error_message(e) << " (MPI rank " << mpi::rank() << " of "
                << mpi::size() << ")\n";
      std::cerr.flush();
      mpi::abort(dynamic_cast<const ResourceError*>(&e) ? 3 : 1);
    }
  });
}

const Registration chain_registration(50, setup_chain);

}  // namespace
}  // namespace covey::cli
