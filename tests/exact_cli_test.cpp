// `covey exact` end to end: JSON against enumeration, the draws file, and bad input (one-line
// error naming the option or file, non-zero exit, an existing output left untouched).
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>

#include "covey/exact/exact_posterior.hpp"
#include "covey/graph/draws_file.hpp"
#include "covey/scores/score_io.hpp"
#include "exact_test_util.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::read_file;
using testing_util::run_covey;
using testing_util::TempDir;

double probability_of(const nlohmann::json& list, const std::string& from, const std::string& to) {
  for (const auto& f : list)
    if (f["from"] == from && f["to"] == to) return f["probability"].get<double>();
  ADD_FAILURE() << "no feature " << from << " " << to;
  return -1;
}

TEST(ExactCli, JsonMatchesEnumeration) {
  // Source: brute-force enumeration of all DAGs of the table.
  TempDir dir;
  const ScoreTable t = testing_util::random_full_table(4, 3, 1000);
  write_scores_hdf5(t, dir.file("t.h5"));
  const auto e = exact_testing::enumerate_posterior(t);
  for (const char* route : {"auto", "layered", "signed"}) {
    const auto r = run_covey("exact " + dir.file("t.h5") + " --json --route " + route);
    ASSERT_EQ(r.exit_code, 0) << r.err;
    const auto j = nlohmann::json::parse(r.out);
    EXPECT_NEAR(j["log_total_weight"].get<double>(), e.log_z, 1e-9);
    ASSERT_EQ(j["edges"].size(), 12u);
    ASSERT_EQ(j["adjacencies"].size(), 6u);
    ASSERT_EQ(j["ancestors"].size(), 12u);
    for (int u = 0; u < 4; ++u)
      for (int v = 0; v < 4; ++v) {
        if (u == v) continue;
        EXPECT_NEAR(probability_of(j["edges"], t.name(u), t.name(v)), e.edge[u * 4 + v], 1e-9);
        EXPECT_NEAR(probability_of(j["ancestors"], t.name(u), t.name(v)), e.ancestor[u * 4 + v],
                    1e-9);
        if (u < v) {
          EXPECT_NEAR(probability_of(j["adjacencies"], t.name(u), t.name(v)),
                      e.edge[u * 4 + v] + e.edge[v * 4 + u], 1e-9);
        }
      }
  }
}

TEST(ExactCli, TextOutputAndDrawsFile) {
  TempDir dir;
  const ScoreTable t = testing_util::random_full_table(5, 2, 1001);
  write_scores_tsv(t, dir.file("t.tsv"));
  const auto r = run_covey("exact " + dir.file("t.tsv") + " --draws 300 --seed 4 -o " +
                           dir.file("d.h5") + " --top 3 --threads 1");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("log total weight (log Z)"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("edges (top 3 of 20"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("300 exact draws (seed 4)"), std::string::npos) << r.out;
  const DrawsFile d = read_draws(dir.file("d.h5"));
  EXPECT_EQ(d.kind, "exact-draws");
  EXPECT_EQ(d.dags.size(), 300u);
  EXPECT_EQ(attribute_integer(d.attributes, "seed"), 4);
  EXPECT_NE(attribute_string(d.attributes, "command_line").value_or("").find("--draws 300"),
            std::string::npos);
  check_draws_match_table(d, t, dir.file("d.h5"));
  for (std::size_t i = 0; i < d.dags.size(); ++i)
    EXPECT_DOUBLE_EQ(d.log_weights[i], log_weight(t, d.dags[i]));
  // The same seed with two threads writes the same draws.
  const auto r2 = run_covey("exact " + dir.file("t.tsv") + " --draws 300 --seed 4 -o " +
                            dir.file("d2.h5") + " --threads 2 --json");
  ASSERT_EQ(r2.exit_code, 0) << r2.err;
  EXPECT_EQ(read_draws(dir.file("d2.h5")).dags, d.dags);
}

TEST(ExactCli, BadInputLeavesOutputUntouched) {
  TempDir dir;
  write_scores_hdf5(testing_util::random_full_table(4, 3, 1002), dir.file("t.h5"));
  // 40 variables with in-degree <= 1: a small table, far beyond the exact engine.
  std::vector<Variable> vars;
  std::vector<NodeScores> nodes(40);
  for (int v = 0; v < 40; ++v) {
    vars.push_back({"V" + std::to_string(v), VariableKind::kDiscrete, {}});
    for (int u = 0; u < 40; ++u)
      if (u != v) nodes[v].candidates.push_back(u);
    for (int i = 0; i <= 39; ++i) {
      nodes[v].masks.push_back(i == 39 ? 0 : ParentMask{1} << i);
      nodes[v].log_scores.push_back(0.0);
    }
  }
  write_scores_hdf5(ScoreTable(vars, nodes), dir.file("big.h5"));
  const std::string out = dir.file("keep.h5");
  testing_util::run_shell("echo precious > " + out);
  struct Case {
    std::string args, message;
    int code;
  };
  const std::vector<Case> cases = {
      {"exact " + dir.file("missing.h5") + " --draws 5 -o " + out, "missing.h5", 1},
      {"exact " + dir.file("t.h5") + " --draws 5", "--draws needs -o/--output", 1},
      {"exact " + dir.file("t.h5") + " -o " + out, "-o/--output needs --draws", 1},
      {"exact " + dir.file("big.h5") + " --draws 5 -o " + out, "40 variables", 3},
      {"exact " + dir.file("t.h5") + " --route nonsense --draws 5 -o " + out, "--route", 1},
      {"exact " + dir.file("t.h5") + " --route signed --draws 5 -o " + out, "layered route", 1},
      {"exact " + dir.file("t.h5") + " --draws 0 -o " + out, "--draws", 2},
      {"exact " + dir.file("t.h5") + " --max-time 0.000001s --draws 5 -o " + out,
       "beyond the limits", 3},
  };
  // With --force, so that each case reaches its own error (the output must survive anyway).
  for (const Case& c : cases) {
    const auto r = run_covey(c.args + " --force");
    EXPECT_EQ(r.exit_code, c.code) << c.args << "\n" << r.err;
    EXPECT_NE(r.err.find(c.message), std::string::npos) << c.args << "\n" << r.err;
    EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1) << r.err;
    EXPECT_TRUE(read_file(out) == "precious\n") << "output changed by " << c.args;
  }
  // The refusal names the estimates.
  const auto big = run_covey("exact " + dir.file("big.h5"));
  EXPECT_NE(big.err.find("GiB"), std::string::npos) << big.err;
  EXPECT_NE(big.err.find("hours"), std::string::npos) << big.err;
}

TEST(ExactCli, CoverMassInJson) {
  TempDir dir;
  const ScoreTable t = testing_util::random_full_table(5, 3, 1003);
  write_scores_hdf5(t, dir.file("t.h5"));
  const auto bad = run_covey("exact " + dir.file("t.h5") + " --cover -1");
  EXPECT_EQ(bad.exit_code, 2) << bad.err;
  EXPECT_NE(bad.err.find("--cover"), std::string::npos) << bad.err;
  const auto r = run_covey("exact " + dir.file("t.h5") + " --cover 2 --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  // Source: the library's enumeration of every DAG of the table (n = 5 <= 6).
  const ClassMass m = cover_class_mass(t, 2, {});
  EXPECT_EQ(j["mass_in_cover_class"]["method"], "enumeration");
  EXPECT_NEAR(j["mass_in_cover_class"]["estimate"].get<double>(), m.estimate, 1e-12);
  EXPECT_NEAR(j["log_cover_weight"].get<double>(),
              j["log_total_weight"].get<double>() + std::log(m.estimate), 1e-12);
}

}  // namespace
}  // namespace covey
