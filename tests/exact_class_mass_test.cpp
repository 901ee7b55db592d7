// The posterior mass of a class of DAGs (DESIGN section 9), exact by enumeration or estimated
// from exact draws with the Wilson interval; the interval itself against R's prop.test.
#include <gtest/gtest.h>

#include <fstream>
#include <sstream>

#include "covey/error.hpp"
#include "covey/exact_posterior.hpp"
#include "covey/proportion.hpp"
#include "exact_test_util.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::random_full_table;

TEST(Proportion, WilsonMatchesRPropTest) {
  // Source: R's prop.test(x, n, correct = FALSE), whose interval is the Wilson score interval.
  const std::vector<std::pair<int, int>> cases = {
      {0, 1000}, {7, 20}, {50, 1000}, {999, 1000}, {1, 3}};
  std::string script = "for (xn in list(";
  for (std::size_t i = 0; i < cases.size(); ++i)
    script += (i ? ",c(" : "c(") + std::to_string(cases[i].first) + "," +
              std::to_string(cases[i].second) + ")";
  script +=
      ")) { ci <- prop.test(xn[1], xn[2], correct=FALSE)$conf.int; "
      "cat(sprintf('%.17g %.17g\\n', ci[1], ci[2])) }";
  testing_util::TempDir dir;
  std::ofstream(dir.file("wilson.R")) << script << "\n";
  const auto r = testing_util::run_shell(std::string(COVEY_RSCRIPT) + " " + dir.file("wilson.R"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::istringstream in(r.out);
  for (const auto& [x, n] : cases) {
    double lo = -1, hi = -1;
    in >> lo >> hi;
    ASSERT_TRUE(in) << r.out;
    const ProportionInterval ci = wilson_interval(x, n);
    EXPECT_NEAR(ci.lo, lo, 1e-12) << x << "/" << n;
    EXPECT_NEAR(ci.hi, hi, 1e-12) << x << "/" << n;
  }
}

TEST(ClassMass, EnumerationAndDrawsAgreeWithDirectSums) {
  // A class with a known membership test (at most three edges); source: enumeration of all DAGs
  // summed directly, and for the draws the Wilson interval must cover that exact mass.
  const ScoreTable t = random_full_table(5, 3, 1100);
  const DagPredicate sparse = [](const Dag& d) { return d.num_edges() <= 3; };
  const auto e = exact_testing::enumerate_posterior(t);
  double direct = 0;
  std::size_t count = 0;
  for (const auto& [parents, p] : e.probability) {
    Dag d;
    d.parents = parents;
    if (sparse(d)) {
      direct += p;
      ++count;
    }
  }
  const ClassMass exact = class_mass_by_enumeration(t, sparse);
  EXPECT_EQ(exact.method, "enumeration");
  EXPECT_NEAR(exact.estimate, direct, 1e-12);
  EXPECT_EQ(exact.inside, count);
  EXPECT_GT(direct, 0.05);
  EXPECT_LT(direct, 0.95);

  ExactOptions options;
  options.draws = true;
  const ExactEngine engine(t, options);
  const ClassMass est = class_mass_from_draws(engine.draw_many(20000, 12), sparse);
  EXPECT_EQ(est.method, "exact-draws");
  EXPECT_EQ(est.draws, 20000u);
  EXPECT_LE(est.lo, direct);
  EXPECT_GE(est.hi, direct);
  EXPECT_LT(est.hi - est.lo, 0.02);
  EXPECT_THROW(class_mass_from_draws({}, sparse), InputError);
}

}  // namespace
}  // namespace covey
