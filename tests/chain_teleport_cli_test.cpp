// `covey chain` with exact teleports and a cover-limited target, through the real binary.
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>

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

}  // namespace
}  // namespace covey
