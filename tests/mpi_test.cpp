// `covey chain` under mpirun (docs/cluster.md): 3 ranks on this machine, each with its own
// member run file and rank 0's manifest. The reference in every test is the same run in one
// process with the same seed: a chain's trace depends only on (seed, global chain index), so
// the member files must hold exactly the single-process chains, also after a rank was killed
// and the job resumed.
//
// Built only with MPI (COVEY_WITH_MPI): `make test` installs OpenMPI, so CI always runs these.
// A build with MPI but no mpirun fails them loudly instead of skipping.
#ifdef COVEY_WITH_MPI

#include <gtest/gtest.h>
#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <filesystem>
#include <functional>
#include <thread>

#include "core/h5.hpp"
#include "covey/chains/chain_run_file.hpp"
#include "covey/chains/chain_support.hpp"
#include "covey/core/error.hpp"
#include "covey/scores/score_io.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::run_covey;
using testing_util::run_shell;
using testing_util::TempDir;

// OpenMPI in a container as root: --allow-run-as-root, --oversubscribe (3 ranks on 2 cores),
// shared memory and self transports only, no CPU binding, no single-copy kernel mechanism
// (often not permitted in containers). The same flags are in docs/cluster.md. Under the
// sanitizer build, LeakSanitizer is off for the ranks: OpenMPI leaves allocations of its
// plugins (unloaded at MPI_Finalize, so no suppression can name them) at exit; covey's own code
// paths are leak-checked by the single-process tests.
std::string mpirun(int ranks) {
  const std::string launcher = COVEY_MPIRUN;
  if (launcher.empty())
    ADD_FAILURE() << "built with MPI but mpirun was not found at configure time";
  return "env OMPI_MCA_btl_vader_single_copy_mechanism=none ASAN_OPTIONS=detect_leaks=0 " +
         launcher +
         " --allow-run-as-root --oversubscribe --bind-to none --mca btl self,vader -np " +
         std::to_string(ranks) + " ";
}

std::string write_table(const TempDir& dir, int n, int d, std::uint64_t seed) {
  const std::string path = dir.file("scores.tsv");
  write_scores_tsv(testing_util::random_full_table(n, d, seed), path);
  return path;
}

// Chain `ca` of run `a` and chain `cb` of run `b` have the same trajectory and final state.
void expect_same_chain(const ChainRun& a, int ca, const ChainRun& b, int cb) {
  const std::string where = a.path() + " chain " + std::to_string(ca) + " vs " + b.path() +
                            " chain " + std::to_string(cb);
  EXPECT_EQ(a.draws(ca), b.draws(cb)) << where;
  EXPECT_EQ(a.log_scores(ca), b.log_scores(cb)) << where;
  EXPECT_EQ(a.draw_steps(ca), b.draw_steps(cb)) << where;
  EXPECT_EQ(a.regenerations(ca), b.regenerations(cb)) << where;
  const ChainCheckpoint x = a.checkpoint(ca), y = b.checkpoint(cb);
  EXPECT_EQ(x.steps, y.steps) << where;
  EXPECT_EQ(x.parents, y.parents) << where;
  EXPECT_EQ(x.rng_state, y.rng_state) << where;
  EXPECT_EQ(x.counts, y.counts) << where;
  EXPECT_EQ(x.regenerations, y.regenerations) << where;
}

// Every chain of the MPI run at `manifest` equals the chain with its global index in `single`;
// the members hold the chains 0..C-1 once each, in order.
void expect_members_equal_single(const std::string& manifest, const ChainRun& single) {
  const auto members = run_member_files(manifest);
  int next = 0;
  for (const std::string& file : members) {
    const ChainRun member = ChainRun::open(file);
    EXPECT_EQ(member.steps(), single.steps()) << file;
    EXPECT_EQ(member.num_draws(), single.num_draws()) << file;
    // The options fixed at creation (the stopping options are the first session's).
    const ChainRunOptions& mo = member.options();
    const ChainRunOptions& so = single.options();
    EXPECT_EQ(mo.chains, so.chains) << file;
    EXPECT_EQ(mo.thin, so.thin) << file;
    EXPECT_EQ(mo.burn_in, so.burn_in) << file;
    EXPECT_EQ(mo.seed, so.seed) << file;
    EXPECT_EQ(mo.rev_rate, so.rev_rate) << file;
    EXPECT_EQ(mo.teleport_rate, so.teleport_rate) << file;
    EXPECT_EQ(mo.teleport_cover, so.teleport_cover) << file;
    EXPECT_EQ(mo.cover_limit, so.cover_limit) << file;
    EXPECT_EQ(mo.start, so.start) << file;
    EXPECT_EQ(mo.block_size, so.block_size) << file;
    EXPECT_EQ(mo.block_rate, so.block_rate) << file;
    for (int c = 0; c < member.num_chains(); ++c) {
      const int g = member.global_chains()[std::size_t(c)];
      EXPECT_EQ(g, next++) << file;
      ASSERT_LT(g, single.num_chains());
      expect_same_chain(member, c, single, g);
    }
  }
  EXPECT_EQ(next, single.num_chains());
}

// Waits (up to 20 s) until pred() holds; file reads racing a checkpoint's rename may fail.
bool wait_for(const std::function<bool()>& pred) {
  for (int i = 0; i < 1000; ++i) {
    try {
      if (pred()) return true;
    } catch (const InputError&) {
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
  }
  return false;
}

pid_t spawn_shell(const std::string& command) {
  const pid_t pid = fork();
  if (pid == 0) {
    execl("/bin/sh", "sh", "-c", command.c_str(), static_cast<char*>(nullptr));
    _exit(127);
  }
  return pid;
}

TEST(MpiChain, ThreeRanksEqualOneProcessChainByChain) {
  TempDir dir;
  const std::string scores = write_table(dir, 8, 3, 17);
  const std::string common =
      scores + " --chains 5 --steps 30000 --thin 7 --burn-in 100 --seed 11 --rev-rate 0.1 --json";
  auto one = run_covey("chain " + common + " -o " + dir.file("one.h5"));
  ASSERT_EQ(one.exit_code, 0) << one.err;
  const std::string manifest = dir.file("mpi.h5");
  auto r = run_shell(mpirun(3) + COVEY_BINARY + " chain " + common + " -o " + manifest);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const ChainRun single = ChainRun::open(dir.file("one.h5"));
  // The members are RUN.rank<r>.h5 beside the manifest: 5 chains over 3 ranks as 1 + 2 + 2.
  const auto members = run_member_files(manifest);
  ASSERT_EQ(members.size(), 3u);
  const std::vector<std::vector<int>> blocks = {{0}, {1, 2}, {3, 4}};
  for (int rank = 0; rank < 3; ++rank) {
    EXPECT_EQ(members[rank], dir.file("mpi.rank" + std::to_string(rank) + ".h5"));
    const ChainRun m = ChainRun::open(members[rank]);
    EXPECT_EQ(m.global_chains(), blocks[rank]);
    EXPECT_EQ(m.mpi_rank(), rank);
    EXPECT_EQ(m.mpi_ranks(), 3);
  }
  expect_members_equal_single(manifest, single);
  // Rank 0 alone prints the summary, for the whole run: the same counts as one process.
  const auto a = nlohmann::json::parse(one.out), b = nlohmann::json::parse(r.out);
  for (const char* key : {"chains", "steps", "draws", "proposals", "accepted",
                          "regenerations_per_chain", "stop_reason"})
    EXPECT_EQ(a[key], b[key]) << key;
  EXPECT_EQ(b["output"].get<std::string>(), manifest);
}

TEST(MpiChain, KilledRankThenResumeEqualsStraightRun) {
  TempDir dir;
  const std::string scores = write_table(dir, 8, 3, 23);
  // Long enough that the kill (after every member's second checkpoint, 0.1 s apart) comes
  // well before the end; checked below.
  const std::uint64_t steps = 10'000'000;
  const std::string common = scores + " --chains 4 --thin 500 --seed 5 --steps 1e7 --json";
  const std::string straight = dir.file("straight.h5");
  auto r = run_shell(mpirun(3) + COVEY_BINARY + " chain " + common + " -o " + straight);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  // The same run; every rank records its process id (exec keeps it), and rank 1 gets SIGKILL.
  const std::string killed = dir.file("killed.h5");
  const pid_t job =
      spawn_shell("exec " + mpirun(3) + "sh -c 'echo $$ > " + dir.path() +
                  "/pid.$OMPI_COMM_WORLD_RANK; exec " + COVEY_BINARY + " chain " + common +
                  " --checkpoint-every 0.1s -o " + killed + "' >/dev/null 2>&1");
  ASSERT_GT(job, 0);
  const bool checkpointed = wait_for([&] {
    for (const std::string& f : run_member_files(killed))
      if (ChainRun::open(f).num_checkpoints() < 3) return false;
    return std::filesystem::exists(dir.file("pid.1"));
  });
  if (!checkpointed) kill(job, SIGKILL);
  ASSERT_TRUE(checkpointed) << "the ranks wrote no checkpoints";
  const pid_t victim = std::stoi(testing_util::read_file(dir.file("pid.1")));
  ASSERT_GT(victim, 1);
  ASSERT_EQ(kill(victim, SIGKILL), 0);
  int status = 0;
  waitpid(job, &status, 0);  // mpirun ends the other ranks and fails
  ASSERT_FALSE(WIFEXITED(status) && WEXITSTATUS(status) == 0) << "the job finished anyway";
  std::uint64_t least = steps;
  for (const std::string& f : run_member_files(killed))
    least = std::min(least, ChainRun::open(f).steps());  // each member's last checkpoint
  EXPECT_LT(least, steps) << "the run finished before it was killed";
  r = run_shell(mpirun(3) + COVEY_BINARY + " chain " + common + " --resume -o " + killed);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(nlohmann::json::parse(r.out)["steps"].get<std::uint64_t>(), steps);
  const auto a = run_member_files(straight), b = run_member_files(killed);
  ASSERT_EQ(a.size(), b.size());
  for (std::size_t m = 0; m < a.size(); ++m) {
    const ChainRun x = ChainRun::open(a[m]), y = ChainRun::open(b[m]);
    ASSERT_EQ(x.global_chains(), y.global_chains());
    EXPECT_EQ(x.num_draws(), y.num_draws());
    for (int c = 0; c < x.num_chains(); ++c) expect_same_chain(x, c, y, c);
  }
  // (The straight MPI run equals the run in one process: ThreeRanksEqualOneProcessChainByChain.)
  for (const auto& e : std::filesystem::directory_iterator(dir.path()))
    EXPECT_EQ(e.path().filename().string().find(".tmp-"), std::string::npos) << e.path();
}

// A rank killed during a checkpoint leaves its member one checkpoint behind the others: here
// made on purpose by putting back rank 1's member of an earlier checkpoint. The resume runs
// that rank up to the others' step first, and the traces still equal a straight run.
TEST(MpiChain, ResumeCatchesUpAMemberACheckpointBehind) {
  TempDir dir;
  const std::string scores = write_table(dir, 8, 3, 47);
  const std::string common = scores + " --chains 4 --thin 25 --seed 12 --json";
  const std::string run = dir.file("run.h5");
  auto r = run_shell(mpirun(3) + COVEY_BINARY + " chain " + common + " --steps 20000 -o " + run);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::filesystem::copy_file(dir.file("run.rank1.h5"), dir.file("behind.h5"));
  r = run_shell(mpirun(3) + COVEY_BINARY + " chain " + common + " --steps 30000 --resume -o " +
                run);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::filesystem::copy_file(dir.file("behind.h5"), dir.file("run.rank1.h5"),
                             std::filesystem::copy_options::overwrite_existing);
  EXPECT_EQ(ChainRun::open(dir.file("run.rank1.h5")).steps(), 20000u);
  EXPECT_EQ(ChainRun::open(dir.file("run.rank2.h5")).steps(), 30000u);
  r = run_shell(mpirun(3) + COVEY_BINARY + " chain " + common + " --steps 50000 --resume -o " +
                run);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  r = run_covey("chain " + common + " --steps 50000 -o " + dir.file("one.h5"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  expect_members_equal_single(run, ChainRun::open(dir.file("one.h5")));
}

TEST(MpiChain, ConvergenceStopIsCollective) {
  TempDir dir;
  const std::string scores = write_table(dir, 6, 2, 5);
  const std::string manifest = dir.file("conv.h5");
  // A cap far beyond what convergence needs; checks every 0.2 s.
  auto r = run_shell(mpirun(3) + COVEY_BINARY + " chain " + scores +
                     " --chains 4 --thin 20 --seed 3 --steps 2e8 --until-rhat 1.05 "
                     "--until-ess 200 --checkpoint-every 0.2s --json -o " +
                     manifest);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["stop_reason"], "converged");
  ASSERT_TRUE(j["convergence"]["converged"].get<bool>());
  // Every member stopped at the same step with the same draws and checkpoint count.
  std::vector<ChainRun> runs;
  for (const std::string& f : run_member_files(manifest)) runs.push_back(ChainRun::open(f));
  ASSERT_EQ(runs.size(), 3u);
  for (const ChainRun& m : runs) {
    EXPECT_EQ(m.steps(), j["steps"].get<std::uint64_t>()) << m.path();
    EXPECT_EQ(m.num_draws(), runs[0].num_draws()) << m.path();
    EXPECT_EQ(m.num_checkpoints(), runs[0].num_checkpoints()) << m.path();
    for (int c = 0; c < m.num_chains(); ++c) EXPECT_EQ(m.checkpoint(c).steps, m.steps());
  }
  EXPECT_LT(runs[0].steps(), 200'000'000u);
  // Judging all members' chains together here gives rank 0's verdict.
  const Verdict again = edge_convergence(RunFeatures(runs), Thresholds{1.05, 200});
  EXPECT_TRUE(again.converged());
  EXPECT_EQ(again.features, j["convergence"]["features"].get<std::size_t>());
  EXPECT_EQ(again.rhat.undefined, j["convergence"]["rhat"]["undefined"].get<std::size_t>());
  EXPECT_DOUBLE_EQ(again.max_rhat, j["convergence"]["max_rhat"].get<double>());
  EXPECT_DOUBLE_EQ(std::fmin(again.min_ess_bulk, again.min_ess_tail),
                   j["convergence"]["min_ess"].get<double>());
}

TEST(MpiChain, MaxTimeStopsEveryRankAtOneStep) {
  TempDir dir;
  const std::string scores = write_table(dir, 8, 3, 37);
  const std::string run = dir.file("timed.h5");
  // Ranks 1 and 2 have two chains each and rank 0 one: the ranks run at different speeds,
  // yet the agreed clock stops them at one step.
  auto r =
      run_shell(mpirun(3) + COVEY_BINARY + " chain " + scores +
                " --chains 5 --thin 1000 --seed 8 --steps 1e12 --max-time 1s --json -o " + run);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["stop_reason"], "max-time");
  // (The slowest clock decides; rank 0's own session can be a little shorter.)
  EXPECT_GT(j["seconds"].get<double>(), 0.5);
  for (const std::string& f : run_member_files(run)) {
    const ChainRun m = ChainRun::open(f);
    EXPECT_EQ(m.steps(), j["steps"].get<std::uint64_t>()) << f;
    EXPECT_EQ(m.num_draws(), j["draws"].get<std::uint64_t>()) << f;
    EXPECT_GT(m.steps(), 0u) << f;
  }
}

TEST(MpiChain, SigtermToOneRankStopsEveryRankAtOneStep) {
  TempDir dir;
  const std::string scores = write_table(dir, 8, 3, 29);
  const std::string run = dir.file("sig.h5");
  const std::string args = scores + " --chains 3 --thin 500 --seed 2 --steps 1e9 --json";
  const pid_t job =
      spawn_shell("exec " + mpirun(3) + "sh -c 'echo $$ > " + dir.path() +
                  "/pid.$OMPI_COMM_WORLD_RANK; exec " + COVEY_BINARY + " chain " + args + " -o " +
                  run + "' >" + dir.file("out.json") + " 2>" + dir.file("err.txt"));
  ASSERT_GT(job, 0);
  const bool started = wait_for(
      [&] { return std::filesystem::exists(dir.file("pid.2")) && std::filesystem::exists(run); });
  if (!started) kill(job, SIGKILL);
  ASSERT_TRUE(started);
  // Only rank 2 sees the signal; the collective stop flag ends all ranks cleanly.
  ASSERT_EQ(kill(std::stoi(testing_util::read_file(dir.file("pid.2"))), SIGTERM), 0);
  int status = 0;
  waitpid(job, &status, 0);
  ASSERT_TRUE(WIFEXITED(status) && WEXITSTATUS(status) == 0)
      << testing_util::read_file(dir.file("err.txt"));
  const auto j = nlohmann::json::parse(testing_util::read_file(dir.file("out.json")));
  EXPECT_EQ(j["stop_reason"], "signal");
  std::vector<std::uint64_t> steps;
  for (const std::string& f : run_member_files(run)) steps.push_back(ChainRun::open(f).steps());
  ASSERT_EQ(steps.size(), 3u);
  EXPECT_EQ(steps[0], j["steps"].get<std::uint64_t>());
  EXPECT_EQ(steps[1], steps[0]);
  EXPECT_EQ(steps[2], steps[0]);
  EXPECT_LT(steps[0], 1'000'000'000u);
  // The stopped run continues: 100000 more steps give the one-process traces.
  const std::uint64_t more = steps[0] + 100'000;
  auto r = run_shell(mpirun(3) + COVEY_BINARY + " chain " + scores + " --steps " +
                     std::to_string(more) + " --resume --json -o " + run);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  r = run_covey("chain " + scores + " --chains 3 --thin 500 --seed 2 --steps " +
                std::to_string(more) + " -o " + dir.file("one.h5"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  expect_members_equal_single(run, ChainRun::open(dir.file("one.h5")));
}

TEST(MpiChain, ManifestMembersAndRefusals) {
  TempDir dir;
  const std::string scores = write_table(dir, 7, 2, 41);
  const std::string common = scores + " --chains 4 --steps 20000 --thin 50 --seed 9";
  auto r = run_covey("chain " + common + " -o " + dir.file("one.h5"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const std::string manifest = dir.file("run.h5");
  r = run_shell(mpirun(3) + COVEY_BINARY + " chain " + common + " -o " + manifest);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  // A plain run file stands for itself; a manifest for its members in chain order.
  EXPECT_EQ(run_member_files(dir.file("one.h5")), std::vector<std::string>{dir.file("one.h5")});
  EXPECT_TRUE(is_run_manifest(manifest));
  EXPECT_FALSE(is_run_manifest(dir.file("one.h5")));
  const RunManifest m = read_run_manifest(manifest);
  EXPECT_EQ(m.num_chains, 4);
  EXPECT_EQ(m.chains, (std::vector<std::vector<int>>{{0}, {1}, {2, 3}}));
  // The members read together are the one-process run: every feature series, chain-major.
  std::vector<ChainRun> runs;
  for (const std::string& f : run_member_files(manifest)) runs.push_back(ChainRun::open(f));
  const RunFeatures merged(runs), single(ChainRun::open(dir.file("one.h5")));
  ASSERT_EQ(merged.chains(), 4);
  ASSERT_EQ(merged.iterations(), single.iterations());
  EXPECT_EQ(merged.edges_seen(), single.edges_seen());
  std::vector<double> x(std::size_t(4) * merged.iterations()), y(x.size());
  merged.log_score(x);
  single.log_score(y);
  EXPECT_EQ(x, y);
  for (const auto& [from, to] : single.edges_seen()) {
    merged.edge(from, to, x);
    single.edge(from, to, y);
    EXPECT_EQ(x, y) << from << " -> " << to;
  }
  // Resuming needs the same number of ranks, and a manifest needs mpirun.
  r = run_shell(mpirun(2) + COVEY_BINARY + " chain " + scores + " --steps 30000 --resume -o " +
                manifest);
  EXPECT_NE(r.exit_code, 0);
  EXPECT_NE(r.err.find("made by 3 MPI ranks; resume it with mpirun -np 3"), std::string::npos)
      << r.err;
  r = run_covey("chain " + scores + " --steps 30000 --resume -o " + manifest);
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.err.find("made by 3 MPI ranks"), std::string::npos) << r.err;
  // More ranks than chains is refused with the option's name.
  r = run_shell(mpirun(3) + COVEY_BINARY + " chain " + scores + " --chains 2 --steps 100 -o " +
                dir.file("few.h5"));
  EXPECT_NE(r.exit_code, 0);
  EXPECT_NE(r.err.find("--chains 2 is fewer than the 3 MPI ranks"), std::string::npos) << r.err;
  // A missing member is named.
  std::filesystem::remove(dir.file("run.rank1.h5"));
  try {
    run_member_files(manifest);
    ADD_FAILURE() << "no error for a missing member";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("run.rank1.h5"), std::string::npos) << e.what();
  }
  // A manifest that lists a chain twice is broken.
  h5::guard(dir.file("twice.h5"), [&] {
    H5::H5File file = h5::create(dir.file("twice.h5"));
    h5::set_attr(file, "format", std::string(kChainManifestFormat));
    h5::set_attr(file, "format_version", kChainManifestFormatVersion);
    h5::set_attr(file, "num_chains", 2LL);
    h5::set_attr_json(file, "options", nlohmann::json::object());
    h5::set_attr_json(file, "members",
                      nlohmann::json::parse(R"([{"file": "one.h5", "chains": [0, 1]},
                                                {"file": "one.h5", "chains": [1]}])"));
    file.close();
  });
  try {
    run_member_files(dir.file("twice.h5"));
    ADD_FAILURE() << "no error for a broken manifest";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("twice.h5: corrupt manifest"), std::string::npos)
        << e.what();
  }
  // Anything else stands for itself (ChainRun::open then says what is wrong with it).
  testing_util::write_file(dir.file("not_hdf5.h5"), "hello\n");
  EXPECT_EQ(run_member_files(dir.file("not_hdf5.h5")),
            std::vector<std::string>{dir.file("not_hdf5.h5")});
  EXPECT_THROW(ChainRun::open(dir.file("not_hdf5.h5")), InputError);
}

// `covey check` and `covey compare` read a manifest as the whole run: the diagnostics of an MPI
// run are those of the same chains run in one process (only the file names differ), and the
// two posteriors agree exactly feature by feature.
TEST(MpiChain, CheckCommandReadsManifest) {
  TempDir dir;
  const std::string scores = write_table(dir, 7, 2, 43);
  const std::string common = scores + " --chains 4 --steps 40000 --thin 20 --seed 4";
  auto r = run_covey("chain " + common + " -o " + dir.file("one.h5"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  r = run_shell(mpirun(3) + COVEY_BINARY + " chain " + common + " -o " + dir.file("mpi.h5"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto one = run_covey("check --json " + dir.file("one.h5"));
  const auto mpi = run_covey("check --json " + dir.file("mpi.h5"));
  ASSERT_EQ(one.exit_code, 0) << one.err;
  ASSERT_EQ(mpi.exit_code, 0) << mpi.err;
  // Replace the file names in both reports, then they must agree exactly.
  std::function<void(nlohmann::json&)> anonymise = [&](nlohmann::json& j) {
    if (j.is_string()) {
      const std::string s = j.get<std::string>();
      if (s.find(dir.path()) != std::string::npos) j = "RUN";
    }
    if (j.is_structured())
      for (auto& child : j) anonymise(child);
  };
  auto a = nlohmann::json::parse(one.out), b = nlohmann::json::parse(mpi.out);
  anonymise(a);
  anonymise(b);
  EXPECT_EQ(a, b);
  const auto cmp = run_covey("compare --json " + dir.file("mpi.h5") + " " + dir.file("one.h5"));
  ASSERT_EQ(cmp.exit_code, 0) << cmp.err;
  const auto c = nlohmann::json::parse(cmp.out);
  ASSERT_FALSE(c["features"].empty());
  for (const auto& f : c["features"]) EXPECT_EQ(f["diff"], 0.0) << f;
}

}  // namespace
}  // namespace covey

#endif  // COVEY_WITH_MPI
