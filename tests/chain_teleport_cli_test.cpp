// `covey chain` with exact teleports and a cover-limited target, through the real binary.
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>

#include "covey/chains/chain_run_file.hpp"
#include "covey/scores/score_io.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::run_covey;

TEST(ChainTeleportCli, TeleportsRegenerateAndLimitMustContainTeleportClass) {
  testing_util::TempDir dir;
  // A random table over all parent sets of size <= 2 on 5 variables (the enumeration tests'
  // shape), where D_2 holds a substantial share of the posterior.
  write_scores_tsv(testing_util::random_full_table(5, 2, 17), dir.file("s.tsv"));
  const auto r = run_covey("chain " + dir.file("s.tsv") + " -o " + dir.file("run.h5") +
                           " --chains 2 --steps 20000 --thin 10 --teleport-cover 2 "
                           "--teleport-rate 0.05 --seed 3 --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto summary = nlohmann::json::parse(r.out);
  // Each chain starts from an exact D_2 draw (a regeneration) and accepted teleports add more.
  EXPECT_GT(summary["regenerations"].get<long>(), 2);
  EXPECT_GT(summary["teleport_acceptance"].get<double>(), 0.0);

  const auto bad = run_covey("chain " + dir.file("s.tsv") + " -o " + dir.file("run2.h5") +
                             " --chains 1 --steps 100 --teleport-cover 2 --cover-limit 1");
  EXPECT_NE(bad.exit_code, 0);
  EXPECT_NE(bad.err.find("--cover-limit 1 must be at least --teleport-cover 2"), std::string::npos)
      << bad.err;
}

// --skip-rejections with teleports (their events drawn with the non-local share of the event
// rate): teleports still regenerate, every step counts as an effective proposal, and the option
// is fixed in the run file (a resume cannot turn it off).
TEST(ChainTeleportCli, SkipRejectionsIsStoredAndFixedOnResume) {
  testing_util::TempDir dir;
  write_scores_tsv(testing_util::random_full_table(5, 2, 17), dir.file("s.tsv"));
  const std::string run = " -o " + dir.file("run.h5");
  const auto r = run_covey("chain " + dir.file("s.tsv") + run +
                           " --chains 2 --steps 20000 --thin 10 --teleport-cover 2 "
                           "--teleport-rate 0.05 --seed 3 --skip-rejections --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto summary = nlohmann::json::parse(r.out);
  EXPECT_GT(summary["regenerations"].get<long>(), 2);
  EXPECT_EQ(summary["steps"].get<long>(), 20000);
  const auto same = run_covey("chain " + dir.file("s.tsv") + run +
                              " --steps 30000 --resume --skip-rejections --json");
  EXPECT_EQ(same.exit_code, 0) << same.err;
  const auto kept = run_covey("chain " + dir.file("s.tsv") + run + " --steps 40000 --resume");
  EXPECT_EQ(kept.exit_code, 0) << kept.err;  // not given: the stored option holds
  const auto plain = run_covey("chain " + dir.file("s.tsv") + " -o " + dir.file("plain.h5") +
                               " --chains 1 --steps 1000");
  ASSERT_EQ(plain.exit_code, 0) << plain.err;
  const auto bad = run_covey("chain " + dir.file("s.tsv") + " -o " + dir.file("plain.h5") +
                             " --steps 2000 --resume --skip-rejections");
  EXPECT_NE(bad.exit_code, 0);
  EXPECT_NE(bad.err.find("--skip-rejections cannot be changed on --resume"), std::string::npos)
      << bad.err;
}

// Teleports into a class that holds almost none of the posterior are said to be useless, once,
// on the terminal and in the run's JSON and session record, from the bound U / w(G) of the mass.
TEST(ChainTeleportCli, SaysWhenTheTeleportClassHoldsNoMass) {
  testing_util::TempDir dir;
  write_scores_tsv(testing_util::dense_full_table(6, 31), dir.file("dense.tsv"));
  const auto r = run_covey("chain " + dir.file("dense.tsv") + " -o " + dir.file("run.h5") +
                           " --chains 2 --steps 2000 --teleport-cover 0 --teleport-rate 0.01 "
                           "--seed 3 --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto summary = nlohmann::json::parse(r.out);
  // D_0 is the empty graph alone, a negligible share of this dense posterior.
  EXPECT_LT(summary["teleport_mass_bound_log10"].get<double>(), -6.0);
  EXPECT_NE(summary.value("teleport_note", "").find("block moves"), std::string::npos);
  EXPECT_NE(r.err.find("covey: note: teleports: D_0 holds at most 10^"), std::string::npos)
      << r.err;

  // The same class as a cover limit holds the whole target: no note, a bound of 10^0.
  const auto inside = run_covey("chain " + dir.file("dense.tsv") + " -o " + dir.file("run3.h5") +
                                " --chains 2 --steps 2000 --teleport-cover 0 --cover-limit 0 "
                                "--teleport-rate 0.01 --seed 3 --json");
  ASSERT_EQ(inside.exit_code, 0) << inside.err;
  EXPECT_EQ(nlohmann::json::parse(inside.out)["teleport_mass_bound_log10"].get<double>(), 0.0);
  EXPECT_EQ(inside.err.find("note: teleports"), std::string::npos) << inside.err;

  // Where D_2 holds a real share (the table of the test above), no note.
  write_scores_tsv(testing_util::random_full_table(5, 2, 17), dir.file("s.tsv"));
  const auto ok = run_covey("chain " + dir.file("s.tsv") + " -o " + dir.file("run2.h5") +
                            " --chains 2 --steps 2000 --teleport-cover 2 --teleport-rate 0.05 "
                            "--seed 3 --json");
  ASSERT_EQ(ok.exit_code, 0) << ok.err;
  const auto quiet = nlohmann::json::parse(ok.out);
  EXPECT_GT(quiet["teleport_mass_bound_log10"].get<double>(), -6.0);
  EXPECT_FALSE(quiet.contains("teleport_note"));
  EXPECT_EQ(ok.err.find("note: teleports"), std::string::npos) << ok.err;
}

// Under --cover-limit the default greedy start climbs inside the class (each node takes the best
// set that keeps the graph in D_k'), so a chain on a dense table starts and stays in D_1; the
// unrestricted ascent would leave it and be refused.
TEST(ChainTeleportCli, GreedyStartStaysInsideTheCoverLimit) {
  testing_util::TempDir dir;
  write_scores_tsv(testing_util::dense_full_table(6, 31), dir.file("dense.tsv"));
  const auto r = run_covey("chain " + dir.file("dense.tsv") + " -o " + dir.file("run.h5") +
                           " --chains 2 --steps 2000 --thin 10 --cover-limit 1 --seed 5");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const RunFeatures features(ChainRun::open(dir.file("run.h5")));
  std::vector<double> inside(std::size_t(features.chains()) * features.iterations());
  features.in_cover_class(1, inside);
  for (double x : inside) ASSERT_EQ(x, 1.0);
  // Not the empty graph: the greedy ascent took edges (D_1 holds stars).
  std::vector<double> edges_first(std::size_t(features.chains()) * features.iterations());
  std::size_t edges = 0;
  for (const auto& [from, to] : features.edges_seen()) {
    features.edge(from, to, edges_first);
    edges += edges_first[0] > 0 ? 1 : 0;
  }
  EXPECT_GT(edges, 0u);
}

}  // namespace
}  // namespace covey
