// Determinism across thread counts, through the CLI, for the randomized or parallel commands not
// already covered elsewhere (draw: CoverCli.DrawReportsJsonWritesDrawsAndIsThreadInvariant;
// exact --draws: ExactCli.TextOutputAndDrawsFile; chain without teleports:
// ChainRunner.SameTracesForOneAndTwoThreads; scoring in the library: scoring_test.cpp). Each
// runs the same command with --threads 1 and --threads 2 and compares everything but timings.
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>

#include "covey/chains/chain_run_file.hpp"
#include "covey/core/random.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "covey/scores/score_io.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::read_file;
using testing_util::run_covey;
using testing_util::TempDir;

std::string to_csv(const DataTable& data) {
  std::string s;
  for (int v = 0; v < data.num_variables(); ++v) s += (v ? "," : "") + data.name(v);
  s += "\n";
  for (std::size_t r = 0; r < data.num_rows(); ++r) {
    for (int v = 0; v < data.num_variables(); ++v)
      s += (v ? "," : "") + data.variables()[v].levels[data.codes(v)[r]];
    s += "\n";
  }
  return s;
}

// Scoring 22 variables: the pairwise candidate screen (default above 20 variables) and the
// parallel scoring both run; the exported TSV tables must be identical text.
TEST(Determinism, ScoreCommandSameTableForOneAndTwoThreads) {
  TempDir dir;
  testing_util::write_file(dir.file("d.csv"),
                           to_csv(testing_util::random_discrete_data(22, 400, 3, 77)));
  for (const char* t : {"1", "2"}) {
    const auto r = run_covey("score " + dir.file("d.csv") + " --max-indegree 2 --threads " + t +
                             " -o " + dir.file(std::string("s") + t + ".tsv"));
    ASSERT_EQ(r.exit_code, 0) << r.err;
  }
  const std::string one = read_file(dir.file("s1.tsv")), two = read_file(dir.file("s2.tsv"));
  EXPECT_GT(one.size(), 1000u);
  EXPECT_EQ(one, two);
}

// Chains with teleports: the sampler is built in parallel, the chains run in parallel.
TEST(Determinism, ChainWithTeleportsSameTraceForOneAndTwoThreads) {
  TempDir dir;
  write_scores_tsv(testing_util::random_full_table(7, 2, 78), dir.file("s.tsv"));
  for (const char* t : {"1", "2"}) {
    const auto r = run_covey("chain " + dir.file("s.tsv") +
                             " --chains 3 --steps 30000 --thin 10 --seed 9 --teleport-cover 2 "
                             "--threads " +
                             t + " -o " + dir.file(std::string("r") + t + ".h5"));
    ASSERT_EQ(r.exit_code, 0) << r.err;
  }
  const ChainRun a = ChainRun::open(dir.file("r1.h5")), b = ChainRun::open(dir.file("r2.h5"));
  ASSERT_EQ(a.num_chains(), 3);
  ASSERT_EQ(b.num_chains(), 3);
  EXPECT_EQ(a.steps(), b.steps());
  std::size_t regenerations = 0;
  for (int c = 0; c < 3; ++c) {
    EXPECT_EQ(a.draws(c), b.draws(c)) << c;
    EXPECT_EQ(a.log_scores(c), b.log_scores(c)) << c;
    EXPECT_EQ(a.regenerations(c), b.regenerations(c)) << c;
    EXPECT_EQ(a.checkpoint(c).rng_state, b.checkpoint(c).rng_state) << c;
    regenerations += a.regenerations(c).size();
  }
  EXPECT_GT(regenerations, 3u);  // the teleports really happened
}

// The saved sampler (split tables built in parallel over cover sets) and draws from it.
TEST(Determinism, SavedSamplerSameForOneAndTwoThreads) {
  TempDir dir;
  const ScoreTable table = testing_util::random_full_table(7, 2, 79);
  write_scores_tsv(table, dir.file("s.tsv"));
  for (const char* t : {"1", "2"}) {
    const auto r = run_covey("draw " + dir.file("s.tsv") + " --cover 2 --draws 200 --threads " + t +
                             " --save-sampler " + dir.file(std::string("p") + t + ".h5"));
    ASSERT_EQ(r.exit_code, 0) << r.err;
  }
  const CoverSampler a = CoverSampler::load(dir.file("p1.h5"), table);
  const CoverSampler b = CoverSampler::load(dir.file("p2.h5"), table);
  EXPECT_EQ(a.num_units(), b.num_units());
  EXPECT_EQ(a.log_upper_bound(), b.log_upper_bound());
  Rng ra = make_stream(5, 0), rb = make_stream(5, 0);
  for (int i = 0; i < 300; ++i) ASSERT_EQ(a.draw(ra), b.draw(rb)) << i;
}

// exact --cover above 6 variables estimates the D_k mass from exact draws made in parallel.
TEST(Determinism, ExactCoverMassFromDrawsSameForOneAndTwoThreads) {
  TempDir dir;
  write_scores_tsv(testing_util::random_full_table(8, 2, 80), dir.file("s.tsv"));
  nlohmann::json out[2];
  for (int t = 1; t <= 2; ++t) {
    const auto r =
        run_covey("exact " + dir.file("s.tsv") +
                  " --cover 2 --cover-draws 3000 --seed 3 --json --threads " + std::to_string(t));
    ASSERT_EQ(r.exit_code, 0) << r.err;
    out[t - 1] = nlohmann::json::parse(r.out);
    out[t - 1].erase("estimate");  // the planner's time estimate, not a result
  }
  ASSERT_TRUE(out[0].contains("mass_in_cover_class")) << out[0].dump();
  EXPECT_EQ(out[0]["mass_in_cover_class"]["draws"], 3000);
  EXPECT_EQ(out[0], out[1]);
}

}  // namespace
}  // namespace covey
