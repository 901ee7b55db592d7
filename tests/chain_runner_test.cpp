// Chain runs end to end: thread-count invariance, bit-for-bit resume (also after a real kill -9
// of the CLI and after SIGINT), the run file read back by h5py (the trace's log scores
// recomputed in Python from the TSV table), start DAG files, option errors, and stationarity of
// the thinned trace against enumeration.
#include <gtest/gtest.h>
#include <signal.h>
#include <sys/wait.h>
#include <tbb/global_control.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <random>
#include <thread>

#include "chain_oracles.hpp"
#include "core/h5.hpp"
#include "covey/analysis/check.hpp"
#include "covey/chains/chain_run_file.hpp"
#include "covey/chains/chain_runner.hpp"
#include "covey/chains/chain_support.hpp"
#include "covey/core/error.hpp"
#include "covey/diagnostics/diagnostics.hpp"
#include "covey/scores/score_io.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::run_covey;
using testing_util::TempDir;

// Every dataset that describes the trajectories (not the checkpoint times).
void expect_same_traces(const ChainRun& a, const ChainRun& b) {
  ASSERT_EQ(a.num_chains(), b.num_chains());
  EXPECT_EQ(a.steps(), b.steps());
  EXPECT_EQ(a.num_draws(), b.num_draws());
  for (int c = 0; c < a.num_chains(); ++c) {
    EXPECT_EQ(a.draws(c), b.draws(c)) << "chain " << c;
    EXPECT_EQ(a.log_scores(c), b.log_scores(c)) << "chain " << c;
    EXPECT_EQ(a.draw_steps(c), b.draw_steps(c)) << "chain " << c;
    EXPECT_EQ(a.regenerations(c), b.regenerations(c)) << "chain " << c;
    const ChainCheckpoint ca = a.checkpoint(c), cb = b.checkpoint(c);
    EXPECT_EQ(ca.parents, cb.parents) << "chain " << c;
    EXPECT_EQ(ca.rng_state, cb.rng_state) << "chain " << c;
    EXPECT_EQ(ca.counts, cb.counts) << "chain " << c;
  }
}

ChainRunOptions small_options() {
  ChainRunOptions o;
  o.chains = 3;
  o.thin = 7;
  o.burn_in = 100;
  o.seed = 99;
  o.rev_rate = 0.1;
  o.steps = 40000;
  o.checkpoint_every = 1e9;
  return o;
}

ChainRunHooks quiet_hooks() {
  ChainRunHooks h;
  h.progress = false;
  return h;
}

TEST(ChainRunner, SameTracesForOneAndTwoThreads) {
  const ScoreTable table = testing_util::random_full_table(7, 3, 21);
  TempDir dir;
  const ChainRunOptions o = small_options();
  {
    tbb::global_control one(tbb::global_control::max_allowed_parallelism, 1);
    run_chains(table, dir.file("one.h5"), o, quiet_hooks(), false);
  }
  {
    tbb::global_control two(tbb::global_control::max_allowed_parallelism, 2);
    run_chains(table, dir.file("two.h5"), o, quiet_hooks(), false);
  }
  const ChainRun one = ChainRun::open(dir.file("one.h5")), two = ChainRun::open(dir.file("two.h5"));
  expect_same_traces(one, two);
  // Thinning: draws at steps 105, 112, ... (> burn-in, multiples of 7) up to 40000.
  const auto steps = one.draw_steps(0);
  ASSERT_FALSE(steps.empty());
  EXPECT_EQ(steps.front(), 105);
  EXPECT_EQ(std::uint64_t(steps.size()), 40000 / 7 - 100 / 7);
  // Different chains use different streams.
  EXPECT_NE(one.draws(0), one.draws(1));
}

TEST(ChainRunner, ResumeContinuesBitForBit) {
  const ScoreTable table = testing_util::random_full_table(7, 3, 22);
  TempDir dir;
  ChainRunOptions o = small_options();
  run_chains(table, dir.file("straight.h5"), o, quiet_hooks(), false);
  // Half, then resume to the full length; the second part with frequent checkpoints.
  ChainRunOptions half = o;
  half.steps = 17001;  // not a multiple of thin: the resume point falls between draws
  run_chains(table, dir.file("resumed.h5"), half, quiet_hooks(), false);
  ChainRunOptions rest = o;
  rest.checkpoint_every = 0;  // a checkpoint after every segment
  const ChainRunSummary s = run_chains(table, dir.file("resumed.h5"), rest, quiet_hooks(), true);
  EXPECT_EQ(s.steps, o.steps);
  EXPECT_EQ(s.session_steps, o.steps - half.steps);
  const ChainRun a = ChainRun::open(dir.file("straight.h5")),
                 b = ChainRun::open(dir.file("resumed.h5"));
  expect_same_traces(a, b);
  EXPECT_GT(b.num_checkpoints(), a.num_checkpoints());
  EXPECT_EQ(b.sessions().size(), 2u);
  // Resuming a finished run does nothing.
  const ChainRunSummary again =
      run_chains(table, dir.file("resumed.h5"), rest, quiet_hooks(), true);
  EXPECT_EQ(again.session_steps, 0u);
  EXPECT_EQ(again.stop_reason, "steps");
}

// With rejection skipping the held wait to the next event is stored in each checkpoint
// (checkpoint_skip_wait), so a resumed run continues bit for bit as with plain steps.
TEST(ChainRunner, SkippingResumeContinuesBitForBit) {
  const ScoreTable table = testing_util::random_full_table(7, 3, 22);
  TempDir dir;
  ChainRunOptions o = small_options();
  o.skip_rejections = true;
  run_chains(table, dir.file("straight.h5"), o, quiet_hooks(), false);
  ChainRunOptions half = o;
  half.steps = 17001;
  run_chains(table, dir.file("resumed.h5"), half, quiet_hooks(), false);
  const ChainRun at_half = ChainRun::open(dir.file("resumed.h5"));
  int held = 0;  // chains stopped inside a wait: the case the stored wait is for
  for (int c = 0; c < at_half.num_chains(); ++c) held += at_half.checkpoint(c).skip_wait ? 1 : 0;
  EXPECT_GT(held, 0);
  ChainRunOptions rest = o;
  rest.checkpoint_every = 0;
  run_chains(table, dir.file("resumed.h5"), rest, quiet_hooks(), true);
  expect_same_traces(ChainRun::open(dir.file("straight.h5")),
                     ChainRun::open(dir.file("resumed.h5")));
}

TEST(ChainRunner, StopSignalWritesCheckpointThatResumes) {
  const ScoreTable table = testing_util::random_full_table(7, 3, 23);
  TempDir dir;
  ChainRunOptions o = small_options();
  o.steps = 3'000'000;
  std::atomic<int> stop{0};
  ChainRunHooks hooks = quiet_hooks();
  hooks.stop_signal = &stop;
  std::thread stopper([&] {
    std::this_thread::sleep_for(std::chrono::milliseconds(300));
    stop.store(SIGTERM);
  });
  const ChainRunSummary s = run_chains(table, dir.file("stopped.h5"), o, hooks, false);
  stopper.join();
  EXPECT_EQ(s.stop_reason, "signal");
  EXPECT_LT(s.steps, o.steps);
  EXPECT_EQ(ChainRun::open(dir.file("stopped.h5")).steps(), s.steps);
  // Resume the stopped run to a fixed total and compare with a straight run of that total.
  ChainRunOptions total = o;
  total.steps = s.steps + 5000;
  run_chains(table, dir.file("stopped.h5"), total, quiet_hooks(), true);
  run_chains(table, dir.file("straight.h5"), total, quiet_hooks(), false);
  expect_same_traces(ChainRun::open(dir.file("stopped.h5")),
                     ChainRun::open(dir.file("straight.h5")));
}

// Edge probabilities of a run (all chains pooled) and their MCSE from 40 batch means.
struct EdgeEstimates {
  std::vector<double> mean, mcse;  // n * n, [u * n + v]
};

EdgeEstimates edge_estimates(const ChainRun& run, int n) {
  const RunFeatures features(run);
  std::vector<double> series(std::size_t(features.chains()) * features.iterations());
  EdgeEstimates out{std::vector<double>(std::size_t(n) * n, 0.0),
                    std::vector<double>(std::size_t(n) * n, 0.0)};
  constexpr int kBatches = 40;
  for (int u = 0; u < n; ++u)
    for (int v = 0; v < n; ++v) {
      if (u == v) continue;
      features.edge(u, v, series);
      const std::size_t len = series.size() / kBatches;
      std::vector<double> m(kBatches, 0);
      double mean = 0, var = 0;
      for (int b = 0; b < kBatches; ++b) {
        for (std::size_t t = 0; t < len; ++t) m[b] += series[b * len + t];
        m[b] /= double(len);
        mean += m[b] / kBatches;
      }
      for (double x : m) var += (x - mean) * (x - mean);
      out.mean[std::size_t(u) * n + v] = mean;
      out.mcse[std::size_t(u) * n + v] = std::sqrt(var / (kBatches - 1) / kBatches);
    }
  return out;
}

TEST(ChainRunner, ThinnedTraceMatchesEnumeration) {
  // Edge frequencies of the stored draws (all chains pooled) against the exact posterior;
  // MCSE from batch means over the pooled, thinned series.
  const ScoreTable table = testing_util::random_full_table(4, 3, 24);
  const auto exact = testing_util::exact_posterior(table, nullptr);
  TempDir dir;
  ChainRunOptions o;
  o.chains = 4;
  o.thin = 5;
  o.burn_in = 1000;
  o.steps = 250000;
  o.rev_rate = 0.1;
  o.checkpoint_every = 1e9;
  run_chains(table, dir.file("run.h5"), o, quiet_hooks(), false);
  const ChainRun run = ChainRun::open(dir.file("run.h5"));
  const EdgeEstimates estimates = edge_estimates(run, 4);
  double max_z = 0;
  for (int u = 0; u < 4; ++u)
    for (int v = 0; v < 4; ++v)
      if (u != v)
        max_z = std::max(max_z, std::abs(estimates.mean[u * 4 + v] - exact.edge[u * 4 + v]) /
                                    estimates.mcse[u * 4 + v]);
  EXPECT_LT(max_z, 4.0);
  // Stored log scores are the table's weights of the stored DAGs.
  const auto rows = run.draws(1);
  const auto ls = run.log_scores(1);
  for (std::size_t i = 0; i < ls.size(); i += 97) {
    Dag d(4);
    for (int v = 0; v < 4; ++v) d.parent_mask(v) = rows[i * 4 + v];
    EXPECT_DOUBLE_EQ(ls[i], log_weight(table, d));
  }
}

TEST(ChainRunner, StartFromDagFileAndOptionErrors) {
  const ScoreTable table = testing_util::random_full_table(5, 2, 25);
  TempDir dir;
  {
    std::ofstream f(dir.file("start.tsv"));
    f << "# a chain X0 -> X1 -> X2\nX0\tX1\nX1\tX2\n\n";
  }
  ChainRunOptions o = small_options();
  o.start = dir.file("start.tsv");
  o.steps = 0;
  o.max_seconds = 0;
  EXPECT_THROW(run_chains(table, dir.file("x.h5"), o, quiet_hooks(), false),
               InputError);  // no stop
  o.steps = 7;               // exactly one thinned draw, at step 7
  o.burn_in = 0;
  o.rev_rate = 0;
  run_chains(table, dir.file("x.h5"), o, quiet_hooks(), false);
  const ChainRun run = ChainRun::open(dir.file("x.h5"));
  ASSERT_EQ(run.num_checkpoints(), 2u);
  // Checkpoint 0 holds the start DAG: read it from the file's first state row via h5py below;
  // here: the run ran and the states are valid DAGs of the table.
  EXPECT_EQ(run.num_draws(), 1u);
  {
    std::ofstream f(dir.file("cycle.tsv"));
    f << "X0\tX1\nX1\tX0\n";
  }
  o.start = dir.file("cycle.tsv");
  EXPECT_THROW(run_chains(table, dir.file("y.h5"), o, quiet_hooks(), false), InputError);
  EXPECT_FALSE(std::filesystem::exists(dir.file("y.h5")));
  {
    std::ofstream f(dir.file("unknown.tsv"));
    f << "X0\tNOPE\n";
  }
  o.start = dir.file("unknown.tsv");
  EXPECT_THROW(run_chains(table, dir.file("y.h5"), o, quiet_hooks(), false), InputError);
  o.start = "empty";
  o.rev_rate = 0.7;
  o.teleport_rate = 0.5;
  EXPECT_THROW(run_chains(table, dir.file("y.h5"), o, quiet_hooks(), false), InputError);
  // A run file of another table is refused on resume.
  const ScoreTable other = testing_util::random_full_table(5, 2, 26);
  o = small_options();
  EXPECT_THROW(run_chains(other, dir.file("x.h5"), o, quiet_hooks(), true), InputError);
}

TEST(ChainRunner, StopsWhenEveryEdgeConverges) {
  const ScoreTable table = testing_util::random_full_table(5, 2, 27);
  TempDir dir;
  ChainRunOptions o;
  o.chains = 4;
  o.thin = 20;
  o.steps = 50'000'000;  // a cap far beyond what convergence needs
  o.until_rhat = 1.02;
  o.until_ess = 300;
  o.checkpoint_every = 0;  // check after every segment
  ChainRunHooks hooks = quiet_hooks();
  hooks.convergence = edge_convergence;
  const ChainRunSummary s = run_chains(table, dir.file("run.h5"), o, hooks, false);
  EXPECT_EQ(s.stop_reason, "converged");
  EXPECT_LT(s.steps, o.steps);
  ASSERT_TRUE(s.convergence_checked);
  EXPECT_TRUE(s.convergence.converged());
  EXPECT_LT(s.convergence.max_rhat, 1.02);
  EXPECT_GT(std::fmin(s.convergence.min_ess_bulk, s.convergence.min_ess_tail), 300);
  // Recomputed from the file, feature by feature, with the diagnostics library directly.
  const ChainRun run = ChainRun::open(dir.file("run.h5"));
  const RunFeatures f(run);
  std::vector<double> values(std::size_t(f.chains()) * f.iterations());
  std::size_t assessed = 0;
  for (const auto& [from, to] : f.edges_seen()) {
    f.edge(from, to, values);
    const FeatureSummary fs = summarize({values, f.chains(), f.iterations()});
    if (std::isnan(fs.rhat)) continue;
    ++assessed;
    EXPECT_LT(fs.rhat, 1.02) << from << "->" << to;
    EXPECT_GT(fs.ess_bulk, 300) << from << "->" << to;
  }
  EXPECT_GT(assessed, 5u);
  // Unreachable thresholds: the step cap stops the run, not converged.
  o.steps = 20000;
  o.until_rhat = 1.0000001;
  o.until_ess = 1e9;
  const ChainRunSummary capped = run_chains(table, dir.file("capped.h5"), o, hooks, false);
  EXPECT_EQ(capped.stop_reason, "steps");
  EXPECT_FALSE(capped.convergence.converged());
}

// The stopping rule has its own schedule, not the checkpoints': with checkpoints an hour apart
// and a step limit, it is checked at every tenth of the steps (segments end there, so the stop
// step is the same on every machine) and stops the run at the first tenth where every edge
// passes. The checks write checkpoints but never change a trajectory: the draws equal those of
// a run of the same seed straight to that step without any stopping rule.
TEST(ChainRunner, StoppingRuleIsCheckedBetweenCheckpoints) {
  const ScoreTable table = testing_util::random_full_table(5, 2, 27);
  TempDir dir;
  ChainRunOptions o;
  o.chains = 4;
  o.thin = 20;
  o.steps = 4'000'000;  // milestones every 400000 steps
  o.until_rhat = 1.02;
  o.until_ess = 300;
  o.checkpoint_every = 3600;
  ChainRunHooks hooks = quiet_hooks();
  hooks.convergence = edge_convergence;
  const ChainRunSummary s = run_chains(table, dir.file("run.h5"), o, hooks, false);
  EXPECT_EQ(s.stop_reason, "converged");
  EXPECT_LT(s.steps, o.steps);
  EXPECT_EQ(s.steps % (o.steps / 10), 0u);
  EXPECT_EQ(s.convergence_checks, s.steps / (o.steps / 10));
  EXPECT_TRUE(s.convergence.converged());
  // The file made at creation, then one checkpoint per check (the last one is the stop's).
  EXPECT_EQ(s.checkpoints, 1 + s.convergence_checks);
  ChainRunOptions straight = o;
  straight.steps = s.steps;
  straight.until_rhat = straight.until_ess = 0;
  run_chains(table, dir.file("straight.h5"), straight, quiet_hooks(), false);
  expect_same_traces(ChainRun::open(dir.file("run.h5")), ChainRun::open(dir.file("straight.h5")));
  // The same rule on its own clock (check_every), with no step limit: the run still stops
  // converged long before the checkpoint interval (max_seconds only guards the test).
  ChainRunOptions timed = o;
  timed.steps = 0;
  timed.check_every = 1e-3;
  timed.max_seconds = 600;
  const ChainRunSummary t = run_chains(table, dir.file("timed.h5"), timed, hooks, false);
  EXPECT_EQ(t.stop_reason, "converged");
  // No checkpoint was due and there are no milestones: the clock of check_every made the checks.
  EXPECT_GE(t.convergence_checks, 1u);
  EXPECT_EQ(t.checkpoints, 1 + t.convergence_checks);
  // A bad interval names its option.
  timed.check_every = -1;
  EXPECT_THROW(run_chains(table, dir.file("bad.h5"), timed, hooks, false), OptionError);
}

// The chain's stopping rule is the verdict of `check` (diagnostics.hpp's judge): over the same
// file and thresholds both count the same passing and failing edges per measure. `check` also
// lists the edges absent from every draw (undefined), which the chain does not judge.
TEST(ChainRunner, StoppingRuleVerdictEqualsCheck) {
  const ScoreTable table = testing_util::random_full_table(5, 2, 28);
  TempDir dir;
  ChainRunOptions o = small_options();
  o.chains = 4;
  o.until_rhat = 1.05;
  o.until_ess = 100;
  ChainRunHooks hooks = quiet_hooks();
  hooks.convergence = edge_convergence;
  const ChainRunSummary s = run_chains(table, dir.file("run.h5"), o, hooks, false);
  ASSERT_TRUE(s.convergence_checked);
  const FeatureKinds edges{true, false, false, false};
  const CheckResult c = check_chain_runs({dir.file("run.h5")}, edges, stopping_thresholds(o));
  const Verdict& v = s.convergence;
  EXPECT_EQ(v.passing, c.verdict.passing);
  EXPECT_EQ(v.failing, c.verdict.failing);
  EXPECT_EQ(v.rhat.passing, c.verdict.rhat.passing);
  EXPECT_EQ(v.ess_bulk.failing, c.verdict.ess_bulk.failing);
  EXPECT_EQ(v.ess_tail.passing, c.verdict.ess_tail.passing);
  EXPECT_EQ(v.state, c.verdict.state);
  EXPECT_DOUBLE_EQ(v.max_rhat, c.verdict.max_rhat);
  EXPECT_GT(v.passing + v.failing, 5u);
}

// start "exact" without teleports: the chains start from exact D_k draws of a sampler built for
// the starts alone, the same draws (each chain's own stream) as the former way through a
// teleport sampler with teleport_rate 0; a start_cover outside the target class, or a sampler
// beyond the memory limit, is an OptionError naming start_cover.
TEST(ChainRunner, ExactStartWithoutTeleports) {
  const ScoreTable table = testing_util::random_full_table(6, 3, 29);
  TempDir dir;
  ChainRunOptions o = small_options();
  o.steps = 2000;
  o.start = "exact";
  o.start_cover = 2;
  o.block_size = 0;  // whole-set block moves would add regenerations of their own
  const ChainRunOptions direct = with_default_choices(o);
  ASSERT_EQ(direct.teleport_rate, 0.0);
  const ChainSupport support(table, direct);
  ChainRunHooks hooks = support.hooks();
  hooks.progress = false;
  ASSERT_EQ(hooks.teleport, nullptr);
  run_chains(table, dir.file("direct.h5"), direct, hooks, false);
  ChainRunOptions trick = o;
  trick.teleport_cover = 2;
  trick.teleport_rate = 0;
  trick = with_default_choices(trick);
  const ChainSupport trick_support(table, trick);
  ChainRunHooks trick_hooks = trick_support.hooks();
  trick_hooks.progress = false;
  run_chains(table, dir.file("trick.h5"), trick, trick_hooks, false);
  const ChainRun a = ChainRun::open(dir.file("direct.h5")),
                 b = ChainRun::open(dir.file("trick.h5"));
  EXPECT_EQ(a.options().start_cover, 2);
  EXPECT_EQ(a.options().teleport_cover, -1);
  for (int c = 0; c < a.num_chains(); ++c) {
    EXPECT_EQ(a.draws(c), b.draws(c)) << "chain " << c;
    // Without teleports the start is no regeneration (no tour of the teleports' kind follows).
    EXPECT_TRUE(a.regenerations(c).empty()) << "chain " << c;
    EXPECT_EQ(b.regenerations(c), std::vector<std::int64_t>{0}) << "chain " << c;
  }
  // The default bound without teleports.
  o.start_cover = -1;
  EXPECT_EQ(with_default_choices(o).start_cover, kDefaultStartCover);
  // Out of the target class D_1, and beyond a memory limit of 1 KiB.
  ChainRunOptions outside = direct;
  outside.cover_limit = 1;
  const ChainSupport outside_support(table, outside);
  try {
    run_chains(table, dir.file("outside.h5"), outside, outside_support.hooks(), false);
    ADD_FAILURE() << "no error";
  } catch (const OptionError& e) {
    EXPECT_NE(std::string(e.what()).find("start_cover"), std::string::npos) << e.what();
  }
  const ChainSupport small(table, direct, "", 1024);
  try {
    run_chains(table, dir.file("small.h5"), direct, small.hooks(), false);
    ADD_FAILURE() << "no error";
  } catch (const OptionError& e) {
    EXPECT_NE(std::string(e.what()).find("memory_limit"), std::string::npos) << e.what();
  }
  EXPECT_FALSE(std::filesystem::exists(dir.file("small.h5")));
}

// ---- Through the CLI ----------------------------------------------------------------------

std::string write_table(const TempDir& dir, int n, int d, std::uint64_t seed) {
  const std::string path = dir.file("scores.tsv");
  write_scores_tsv(testing_util::random_full_table(n, d, seed), path);
  return path;
}

// Starts `covey ARGS` in the background (output discarded); returns its pid.
pid_t spawn_covey(const std::string& args) {
  const pid_t pid = fork();
  if (pid == 0) {
    const std::string cmd = std::string(COVEY_BINARY) + " " + args + " >/dev/null 2>&1";
    execl("/bin/sh", "sh", "-c", ("exec " + cmd).c_str(), static_cast<char*>(nullptr));
    _exit(127);
  }
  return pid;
}

// Waits (up to `seconds`) until `run` is a readable run file with at least `checkpoints`.
bool wait_for_checkpoints(const std::string& run, std::size_t checkpoints, double seconds) {
  const auto until = std::chrono::steady_clock::now() + std::chrono::duration<double>(seconds);
  while (std::chrono::steady_clock::now() < until) {
    try {
      if (std::filesystem::exists(run) && ChainRun::open(run).num_checkpoints() >= checkpoints)
        return true;
    } catch (const InputError&) {
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(10));
  }
  return false;
}

// Sends SIGKILL and reaps the process; true when the signal (not the end of the run) ended it.
bool kill_nine(pid_t pid) {
  kill(pid, SIGKILL);
  int status = 0;
  waitpid(pid, &status, 0);
  return WIFSIGNALED(status) && WTERMSIG(status) == SIGKILL;
}

void expect_no_temporaries(const TempDir& dir, const std::string& name) {
  for (const auto& e : std::filesystem::directory_iterator(dir.path()))
    EXPECT_EQ(e.path().filename().string().find("." + name + ".tmp"), std::string::npos)
        << e.path();
}

TEST(ChainCli, KillNineThenResumeEqualsStraightRun) {
  TempDir dir;
  const std::string scores = write_table(dir, 8, 3, 31);
  // Long enough that a fast machine cannot finish before the kill (the kill comes after the
  // second checkpoint, 0.2 s in); the step count is checked below.
  const std::uint64_t steps = 20'000'000;
  const std::string common = scores + " --chains 2 --thin 500 --seed 5 --steps 2e7 --json";
  // Straight run.
  auto r = run_covey("chain " + common + " -o " + dir.file("straight.h5"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  // The same run killed with SIGKILL after a few checkpoints, then resumed.
  const std::string killed = dir.file("killed.h5");
  const pid_t pid = spawn_covey("chain " + common + " --checkpoint-every 0.1s -o " + killed);
  ASSERT_GE(pid, 0);
  const bool checkpointed = wait_for_checkpoints(killed, 2, 12);
  ASSERT_TRUE(kill_nine(pid)) << "the run finished before it was killed";
  ASSERT_TRUE(checkpointed) << "the run wrote no checkpoints";
  const ChainRun partial = ChainRun::open(killed);  // the last checkpoint survived
  EXPECT_LT(partial.steps(), steps);
  r = run_covey("chain " + common + " --resume -o " + killed);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(nlohmann::json::parse(r.out)["session_steps"].get<std::uint64_t>(),
            steps - partial.steps());
  expect_same_traces(ChainRun::open(dir.file("straight.h5")), ChainRun::open(killed));
  expect_no_temporaries(dir, "killed.h5");
}

// Ten sessions of one run, each killed with SIGKILL at a random moment (uniform in 0-400 ms
// after it started, from a fixed seed; checkpoints every 20 ms, so kills also land while a
// checkpoint file is being written), each continued with --resume: every resume succeeds, and
// the finished trace equals that of a run never interrupted.
TEST(ChainCli, TenRandomKillsThenResumeEqualsStraightRun) {
  TempDir dir;
  const std::string scores = write_table(dir, 8, 3, 36);
  const std::string common = scores + " --chains 2 --thin 200 --seed 8 --steps 3e7 --json";
  auto r = run_covey("chain " + common + " -o " + dir.file("straight.h5"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const std::string run = dir.file("run.h5");
  std::mt19937_64 moments(2026);
  std::uniform_int_distribution<int> delay_ms(0, 400);
  int kills = 0;
  std::uint64_t last_steps = 0;
  for (int session = 0; session < 10; ++session) {
    const bool resume = std::filesystem::exists(run);
    const pid_t pid = spawn_covey("chain " + common + " --checkpoint-every 0.02s" +
                                  (resume ? " --resume" : "") + " -o " + run);
    ASSERT_GE(pid, 0);
    // The first session is killed only once its run file exists (before that there is nothing
    // to resume); later ones at any moment, also before their first checkpoint.
    if (!resume) {
      ASSERT_TRUE(wait_for_checkpoints(run, 1, 30)) << "no run file written";
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(delay_ms(moments)));
    if (kill_nine(pid)) ++kills;
    // Whatever the moment, the file is the complete last checkpoint, never older work.
    const ChainRun partial = ChainRun::open(run);
    EXPECT_GE(partial.steps(), last_steps) << "session " << session;
    last_steps = partial.steps();
  }
  EXPECT_EQ(kills, 10) << "a session finished before its kill: the run is too short";
  r = run_covey("chain " + common + " --resume -o " + run);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  expect_same_traces(ChainRun::open(dir.file("straight.h5")), ChainRun::open(run));
  // A session is recorded with its first checkpoint: those killed before it left no trace.
  const std::size_t sessions = ChainRun::open(run).sessions().size();
  EXPECT_GE(sessions, 2u);
  EXPECT_LE(sessions, 11u);
  expect_no_temporaries(dir, "run.h5");
}

TEST(ChainCli, SigtermWritesCheckpointExitsCleanlyAndResumes) {
  TempDir dir;
  const std::string scores = write_table(dir, 8, 3, 37);
  const std::string out = dir.file("run.h5");
  const std::string common = scores + " --chains 2 --thin 100 --seed 4 --steps 3e8";
  const auto r = testing_util::run_shell(std::string(COVEY_BINARY) + " chain " + common + " -o " +
                                         out + " & pid=$!; sleep 1; kill -TERM $pid; wait $pid");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.err.find("stopped by SIGTERM"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("--resume"), std::string::npos) << r.err;
  const ChainRun stopped = ChainRun::open(out);
  EXPECT_GT(stopped.steps(), 0u);
  EXPECT_LT(stopped.steps(), 300'000'000u);
  // The checkpoint continues: resume to a total a little beyond it, and compare with a straight
  // run of that length.
  const std::string total = std::to_string(stopped.steps() + 5000);
  const std::string shorter = scores + " --chains 2 --thin 100 --seed 4 --steps " + total;
  auto again = run_covey("chain " + shorter + " --resume -o " + out);
  ASSERT_EQ(again.exit_code, 0) << again.err;
  again = run_covey("chain " + shorter + " -o " + dir.file("straight.h5"));
  ASSERT_EQ(again.exit_code, 0) << again.err;
  expect_same_traces(ChainRun::open(dir.file("straight.h5")), ChainRun::open(out));
  expect_no_temporaries(dir, "run.h5");
}

// A full disk while a checkpoint is written, made unprivileged with a file-size limit
// (RLIMIT_FSIZE through `ulimit -f`, with SIGXFSZ ignored so that writes fail with EFBIG): a
// clear error and a non-zero exit, the previous checkpoint byte for byte intact, no temporary
// file left, and the run resumes to the trace of an uninterrupted run.
TEST(ChainCli, DiskFullDuringCheckpointKeepsThePreviousOne) {
  TempDir dir;
  const std::string scores = write_table(dir, 6, 2, 38);
  const std::string out = dir.file("run.h5");
  const std::string common = scores + " --chains 2 --thin 10 --seed 6";
  auto r = run_covey("chain " + common + " --steps 20000 -o " + out);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const std::string before = testing_util::read_file(out);
  // The limit is the size of the current file (in 512-byte blocks, as POSIX `ulimit -f` counts
  // them): copying it still fits, the new draws of the next checkpoint do not.
  const std::size_t blocks = before.size() / 512 + 1;
  r = testing_util::run_shell("trap '' XFSZ; ulimit -f " + std::to_string(blocks) + "; exec " +
                              COVEY_BINARY + " chain " + common + " --steps 2000000 --resume -o " +
                              out);
  EXPECT_NE(r.exit_code, 0) << r.err;
  EXPECT_NE(r.err.find("run.h5"), std::string::npos) << r.err;
  EXPECT_TRUE(r.err.find("file size limit") != std::string::npos ||
              r.err.find("File too large") != std::string::npos)
      << r.err;
  EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1) << r.err;
  EXPECT_TRUE(testing_util::read_file(out) == before) << "the last checkpoint was changed";
  expect_no_temporaries(dir, "run.h5");
  r = run_covey("chain " + common + " --steps 60000 --resume -o " + out);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  r = run_covey("chain " + common + " --steps 60000 -o " + dir.file("straight.h5"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  expect_same_traces(ChainRun::open(dir.file("straight.h5")), ChainRun::open(out));
}

// Fuzz regression (tests/fuzz/regressions/chain_h5/oom_num_chains_attribute): a num_chains
// attribute edited to a huge value made the reader size its chain list by it (4 GiB) before
// finding the groups missing; it must be refused first, as a corrupt file.
TEST(ChainCli, HugeNumChainsAttributeIsACorruptFileNotAnAllocation) {
  TempDir dir;
  const std::string scores = write_table(dir, 5, 2, 35);
  const std::string out = dir.file("run.h5");
  ASSERT_EQ(run_covey("chain " + scores + " --chains 2 --steps 2000 --thin 10 -o " + out).exit_code,
            0);
  for (const long long bad : {0LL, -3LL, 3LL, 1LL << 40}) {
    {
      H5::H5File f(out, H5F_ACC_RDWR);
      f.removeAttr("num_chains");
      h5::set_attr(f, "num_chains", bad);
    }
    try {
      ChainRun::open(out);
      ADD_FAILURE() << "num_chains " << bad << " accepted";
    } catch (const InputError& e) {
      // 3 passes the first check and fails on the chain list; the others fail at once.
      const std::string message = e.what();
      EXPECT_EQ(message.rfind(out + ": ", 0), 0u) << message;
      if (bad != 3) {
        EXPECT_NE(message.find("num_chains"), std::string::npos) << message;
      }
    }
  }
}

TEST(ChainCli, SigintStopsCleanlyAndJsonSummary) {
  TempDir dir;
  const std::string scores = write_table(dir, 8, 3, 32);
  const std::string out = dir.file("run.h5");
  const auto r = testing_util::run_shell(std::string(COVEY_BINARY) + " chain " + scores +
                                         " --steps 1e12 --json -o " + out +
                                         " & pid=$!; sleep 1; kill -INT $pid; wait $pid");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.err.find("stopped by SIGINT"), std::string::npos) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["stop_reason"], "signal");
  for (const char* key : {"steps", "seconds", "proposals_per_second", "acceptance",
                          "teleport_acceptance", "regenerations"})
    EXPECT_TRUE(j.contains(key)) << key;
  EXPECT_GT(j["proposals_per_second"].get<double>(), 1e5);
  EXPECT_EQ(ChainRun::open(out).steps(), j["steps"].get<std::uint64_t>());
}

TEST(ChainCli, RunFileReadByH5pyAndScoresRecomputed) {
  // Independent reader: h5py reads the run file; Python recomputes every stored log score from
  // the TSV table and the stored parent bitsets.
  TempDir dir;
  const std::string scores = write_table(dir, 6, 2, 33);
  const std::string out = dir.file("run.h5");
  auto r = run_covey("chain " + scores + " --chains 2 --steps 20000 --thin 10 --seed 3 -o " + out);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const std::string script = dir.file("check.py");
  {
    std::ofstream py(script);
    py << R"PY(
import sys, h5py, json
scores, path = sys.argv[1], sys.argv[2]
rows = [l.rstrip("\n").split("\t") for l in open(scores) if l.strip() and not l.startswith("#")]
names = rows[0][1:]
table = {}
for node, parents, score in rows[2:]:
    ps = frozenset(names.index(p) for p in parents.split(",") if p)
    table[(names.index(node), ps)] = float(score)
f = h5py.File(path, "r")
assert f.attrs["format"] == "covey-chain-run"
assert [s.decode() if isinstance(s, bytes) else s for s in f["variables"][:]] == names
opts = json.loads(f.attrs["options"])
assert opts["chains"] == 2 and opts["thin"] == 10
n = len(names)
checked = 0
for c in range(2):
    g = f["chain_%03d" % c]
    draws, ls, steps = g["draws"][:], g["log_scores"][:], g["steps"][:]
    assert draws.shape == (2000, n) and len(ls) == 2000 and steps[0] == 10 and steps[-1] == 20000
    for i in range(0, 2000, 37):
        total = 0.0
        for v in range(n):
            ps = frozenset(u for u in range(n) if (int(draws[i, v]) >> u) & 1)
            total += table[(v, ps)]
        assert abs(total - ls[i]) < 1e-9 * max(1.0, abs(total)), (c, i, total, ls[i])
        checked += 1
    assert g["checkpoint_counts"][-1][0] == 20000
print(checked)
)PY";
  }
  r = testing_util::run_shell(std::string(COVEY_REFERENCE_PYTHON) + " " + script + " " + scores +
                              " " + out);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_GT(std::stoi(r.out), 100);
  // h5dump verifies the Fletcher32 checksums of every chunk it reads.
  r = testing_util::run_shell(std::string(COVEY_H5DUMP) + " -d /chain_001/draws " + out);
  EXPECT_EQ(r.exit_code, 0) << r.err;
}

TEST(ChainCli, ErrorsNameTheOption) {
  TempDir dir;
  const std::string scores = write_table(dir, 5, 2, 34);
  auto r = run_covey("chain " + scores + " -o " + dir.file("a.h5") + " --steps lots");
  EXPECT_NE(r.exit_code, 0);
  EXPECT_NE(r.err.find("--steps"), std::string::npos) << r.err;
  r = run_covey("chain " + scores + " -o " + dir.file("a.h5") + " --max-time 10 parsecs");
  EXPECT_NE(r.exit_code, 0);
  r = run_covey("chain " + scores + " -o " + dir.file("a.h5") + " --max-time 3x");
  EXPECT_NE(r.err.find("--max-time"), std::string::npos) << r.err;
  r = run_covey("chain " + scores + " -o " + dir.file("a.h5"));
  EXPECT_NE(r.err.find("stopping rule"), std::string::npos) << r.err;
  r = run_covey("chain " + scores + " -o " + dir.file("a.h5") + " --steps 1000 --thin 10");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  r = run_covey("chain " + scores + " -o " + dir.file("a.h5") + " --steps 2000 --thin 20 --resume");
  EXPECT_NE(r.exit_code, 0);
  EXPECT_NE(r.err.find("--thin cannot be changed on --resume"), std::string::npos) << r.err;
  r = run_covey("chain " + scores + " -o " + dir.file("a.h5") + " --steps 2000 --thin 10 --resume");
  EXPECT_EQ(r.exit_code, 0) << r.err;  // repeating an option unchanged is fine
  EXPECT_FALSE(std::filesystem::exists(dir.file("b.h5")));
  r = run_covey("chain " + scores + " -o " + dir.file("b.h5") + " --steps 10 --resume");
  EXPECT_NE(r.exit_code, 0);
  EXPECT_NE(r.err.find("b.h5"), std::string::npos) << r.err;
}

TEST(RandomStream, SaveLoadRoundTripAndCorruptStatesRejected) {
  Rng rng = make_stream(99, 3);
  for (int i = 0; i < 1000; ++i) rng();
  const std::string state = save_stream(rng);
  Rng restored = load_stream(state);
  EXPECT_TRUE(restored == rng);
  EXPECT_EQ(restored(), rng());
  EXPECT_THROW(load_stream(state.substr(0, state.size() / 2)), InputError);
  EXPECT_THROW(load_stream("not a state"), InputError);
  EXPECT_THROW(load_stream(state + " 17"), InputError);
}

TEST(ChainCli, UntilRhatAndMaxTime) {
  TempDir dir;
  const std::string scores = write_table(dir, 5, 2, 35);
  auto r = run_covey("chain " + scores + " -o " + dir.file("a.h5") +
                     " --until-rhat 1.05 --until-ess 200 --checkpoint-every 0.2s --thin 20 --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  auto j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["stop_reason"], "converged");
  EXPECT_TRUE(j["convergence"]["converged"].get<bool>());
  r = run_covey("chain " + scores + " -o " + dir.file("b.h5") + " --max-time 1s --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["stop_reason"], "max-time");
  EXPECT_GE(j["seconds"].get<double>(), 1.0);
  EXPECT_LT(j["seconds"].get<double>(), 5.0);
}

// The pending-draws buffer between checkpoints gets one segment of rows after another (1500
// segments of 0.2 s between checkpoints 300 s apart). Reserving exactly each segment's need
// reallocated (and copied the whole buffer) every segment; reserve_for_append must reallocate
// only O(log rows) times. The exact reservation is checked to fail the same bound, so the bound
// can tell the two apart. (Small rows keep the test quick; the count does not depend on them.)
TEST(ChainRunner, PendingDrawsGrowGeometrically) {
  constexpr std::size_t kSegments = 1500, kRowWords = 64;
  std::vector<std::uint64_t> geometric, exact;
  std::size_t geometric_reallocations = 0, exact_reallocations = 0;
  for (std::size_t s = 0; s < kSegments; ++s) {
    if (reserve_for_append(geometric, kRowWords)) ++geometric_reallocations;
    geometric.resize(geometric.size() + kRowWords);
    const std::size_t capacity = exact.capacity();
    exact.reserve(exact.size() + kRowWords);  // the old run_segment
    if (exact.capacity() != capacity) ++exact_reallocations;
    exact.resize(exact.size() + kRowWords);
  }
  const std::size_t bound = 2 + static_cast<std::size_t>(std::log2(double(kSegments)));
  EXPECT_LE(geometric_reallocations, bound);
  EXPECT_GT(exact_reallocations, bound);
  EXPECT_LE(geometric.capacity(), 2 * geometric.size());
  // Room already there: no reallocation, and the capacity is kept.
  const std::size_t capacity = geometric.capacity();
  geometric.resize(geometric.size() - 10);
  EXPECT_FALSE(reserve_for_append(geometric, 10));
  EXPECT_EQ(geometric.capacity(), capacity);
}

TEST(Duration, ParsesUnits) {
  EXPECT_DOUBLE_EQ(parse_duration("90s", "--x"), 90);
  EXPECT_DOUBLE_EQ(parse_duration("10m", "--x"), 600);
  EXPECT_DOUBLE_EQ(parse_duration("1.5h", "--x"), 5400);
  EXPECT_DOUBLE_EQ(parse_duration("45", "--x"), 45);
  EXPECT_THROW(parse_duration("-1m", "--x"), InputError);
  EXPECT_THROW(parse_duration("m", "--x"), InputError);
}

// A user's run is never replaced unasked (issue: `chain -o EXISTING` lost a converged run), and a
// resume cannot change how the run was made; both are library rules the CLI only spells.
TEST(ChainRunner, RefusesToReplaceARunAndToChangeFixedOptionsOnResume) {
  const ScoreTable table = testing_util::random_full_table(5, 2, 23);
  TempDir dir;
  ChainRunOptions o = small_options();
  o.steps = 2000;
  const std::string run = dir.file("run.h5");
  run_chains(table, run, o, quiet_hooks(), false);
  const std::uint64_t steps = ChainRun::open(run).steps();
  try {
    ChainRunOptions again = o;
    again.steps = 1000;
    run_chains(table, run, again, quiet_hooks(), false);
    ADD_FAILURE() << "an existing run was replaced without overwrite";
  } catch (const OptionError& e) {
    EXPECT_NE(e.message_template().find("{overwrite}"), std::string::npos) << e.what();
  }
  EXPECT_EQ(ChainRun::open(run).steps(), steps);  // untouched
  ChainRunOptions replace = o;
  replace.steps = 700;
  replace.overwrite = true;
  run_chains(table, run, replace, quiet_hooks(), false);
  EXPECT_EQ(ChainRun::open(run).steps(), 700u);

  ChainRunOptions changed = o;
  changed.thin = 3;
  const std::vector<std::string> given{"thin", "steps"};
  try {
    resume_options(run, changed, given);
    ADD_FAILURE() << "a resume changed --thin";
  } catch (const OptionError& e) {
    EXPECT_NE(e.message_template().find("{thin} cannot be changed"), std::string::npos) << e.what();
  }
  // Repeating the stored value is fine, and the session options come from the caller.
  changed.thin = o.thin;
  changed.steps = 5000;
  const ChainRunOptions resumed = resume_options(run, changed, given);
  EXPECT_EQ(resumed.thin, o.thin);
  EXPECT_EQ(resumed.steps, 5000u);
  EXPECT_EQ(resumed.block_size, ChainRun::open(run).options().block_size);
}

// Rejection skipping through the runner (docs/chains.md, "Rejection skipping"), n = 10: the
// skipped rejections still fill the thinned trace (the same draw steps as the plain run), the
// edge probabilities of a run with skipping and one without agree within 4 MCSE of their
// difference, and the option is stored in the run file. A run with a checkpoint after every
// segment keeps the same trajectory (the wait to the next event outlives the segment).
TEST(ChainRunner, SkippingAgreesWithPlainRunN10) {
  const int n = 10;
  const ScoreTable table = testing_util::random_full_table(n, 3, 41);
  TempDir dir;
  ChainRunOptions o;
  o.chains = 4;
  o.thin = 20;
  o.burn_in = 5000;
  o.steps = 400'000;
  o.rev_rate = 0.05;
  o.block_size = 0;
  o.block_rate = 0;
  o.seed = 41;
  o.checkpoint_every = 1e9;
  run_chains(table, dir.file("plain.h5"), o, quiet_hooks(), false);
  ChainRunOptions skip = o;
  skip.skip_rejections = true;
  skip.seed = 42;
  const ChainRunSummary summary =
      run_chains(table, dir.file("skip.h5"), skip, quiet_hooks(), false);
  // Effective proposals: every step, the skipped rejections included.
  EXPECT_EQ(summary.session_proposals, std::uint64_t(skip.chains) * skip.steps);
  const ChainRun plain_run = ChainRun::open(dir.file("plain.h5"));
  const ChainRun skip_run = ChainRun::open(dir.file("skip.h5"));
  EXPECT_FALSE(plain_run.options().skip_rejections);
  EXPECT_TRUE(skip_run.options().skip_rejections);
  ASSERT_EQ(skip_run.num_draws(), plain_run.num_draws());
  EXPECT_EQ(skip_run.draw_steps(0), plain_run.draw_steps(0));
  // Evaluated proposals only: far fewer than the steps when most moves are rejected.
  EXPECT_LT(skip_run.checkpoint(0).counts.total_proposed(), o.steps);
  const EdgeEstimates a = edge_estimates(plain_run, n), b = edge_estimates(skip_run, n);
  double max_z = 0;
  for (std::size_t e = 0; e < a.mean.size(); ++e) {
    const double se = std::hypot(a.mcse[e], b.mcse[e]);
    if (se > 0) max_z = std::max(max_z, std::abs(a.mean[e] - b.mean[e]) / se);
  }
  EXPECT_LT(max_z, 4.0);
  // A broken comparison would pass trivially if the edges never moved.
  EXPECT_GT(*std::max_element(a.mcse.begin(), a.mcse.end()), 0.0);

  ChainRunOptions chopped = skip;
  chopped.steps = 60'000;
  chopped.checkpoint_every = 0;  // a checkpoint after every segment
  ChainRunOptions straight = chopped;
  straight.checkpoint_every = 1e9;
  run_chains(table, dir.file("chopped.h5"), chopped, quiet_hooks(), false);
  run_chains(table, dir.file("straight.h5"), straight, quiet_hooks(), false);
  const ChainRun c = ChainRun::open(dir.file("chopped.h5"));
  EXPECT_GT(c.num_checkpoints(), 2u);
  expect_same_traces(c, ChainRun::open(dir.file("straight.h5")));
}

}  // namespace
}  // namespace covey
