// From local scores to a table: structure priors (parent-count against the log binomial
// coefficient of its definition, Friedman & Koller 2003; edge penalty), candidate parents (the
// pairwise screen), forbidden and required edges and their file errors, the memory limit,
// bit-identical tables for any number of threads, and BGe scores that do not depend on units.
#include <gtest/gtest.h>
#include <tbb/global_control.h>

#include <bit>
#include <cmath>
#include <cstdlib>
#include <cstring>

#include "covey/core/error.hpp"
#include "covey/core/memory.hpp"
#include "covey/data/edge_constraints.hpp"
#include "covey/scores/scores.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

// log C(m, k) from the exact integer (m <= 60).
double exact_log_binomial(int m, int k) {
  unsigned __int128 c = 1;
  for (int i = 0; i < k; ++i) c = c * (m - i) / (i + 1);  // exact at every step
  return std::log(static_cast<double>(c));
}

TEST(StructurePrior, ParentCountAndEdgePenaltyFactors) {
  const DataTable data = testing_util::random_discrete_data(6, 400, 2, 1);
  ScoreOptions uniform;
  const ScoreTable base = score_data(data, uniform);
  ScoreOptions parent_count;
  parent_count.prior = PriorKind::kParentCount;
  const ScoreTable pc = score_data(data, parent_count);
  ScoreOptions penalty;
  penalty.prior = PriorKind::kEdgePenalty;
  penalty.edge_penalty = 1.75;
  const ScoreTable ep = score_data(data, penalty);
  for (int v = 0; v < 6; ++v)
    for (ParentMask g : base.global_parent_sets(v)) {
      const int k = std::popcount(g);
      // Parent-count prior: 1 / C(n-1, |S|) with n = 6 variables.
      EXPECT_NEAR(pc.log_score_global(v, g) - base.log_score_global(v, g),
                  -exact_log_binomial(5, k), 1e-12);
      EXPECT_NEAR(ep.log_score_global(v, g) - base.log_score_global(v, g), -1.75 * k, 1e-9);
    }
  for (int k = 0; k <= 30; ++k)
    EXPECT_NEAR(log_structure_prior(PriorKind::kParentCount, 0, 61, k), -exact_log_binomial(60, k),
                1e-12 * (1 + exact_log_binomial(60, k)));
  EXPECT_EQ(pc.metadata().prior, "parent-count");
  EXPECT_EQ(attribute_number(ep.metadata().parameters, "edge_penalty"), 1.75);
  EXPECT_THROW(prior_kind_from_string("flat"), InputError);
}

// Sum_{k<=d} C(m, k).
std::size_t subsets_up_to(int m, int d) {
  std::size_t total = 0;
  for (int k = 0; k <= std::min(m, d); ++k)
    total += static_cast<std::size_t>(std::exp(exact_log_binomial(m, k)) + 0.5);
  return total;
}

TEST(Candidates, ScreenKeepsTheBestSingleParents) {
  const DataTable data = testing_util::random_discrete_data(25, 600, 3, 2);
  const auto score = make_bdeu(data, 1.0);
  ScoreOptions options;  // n = 25 > 20: 20 candidates by default
  options.max_indegree = 2;
  const ScoreTable table = compute_scores(*score, data.variables(), data.num_rows(), options, {});
  for (int v = 0; v < 25; ++v) {
    // The 20 best u by s_v({u}) - s_v({}), ties to the lower index.
    std::vector<int> others;
    for (int u = 0; u < 25; ++u)
      if (u != v) others.push_back(u);
    std::vector<double> gain(25);
    for (int u : others)
      gain[u] = score->log_marginal(v, std::vector<int>{u}) - score->log_marginal(v, {});
    std::stable_sort(others.begin(), others.end(), [&](int a, int b) { return gain[a] > gain[b]; });
    others.resize(20);
    std::sort(others.begin(), others.end());
    const auto cand = table.candidates(v);
    EXPECT_EQ(std::vector<int>(cand.begin(), cand.end()), others) << "node " << v;
    EXPECT_EQ(table.num_parent_sets(v), subsets_up_to(20, 2));
  }
  options.candidates = 5;
  const ScoreTable five = compute_scores(*score, data.variables(), data.num_rows(), options, {});
  for (int v = 0; v < 25; ++v) {
    ASSERT_EQ(five.candidates(v).size(), 5u);
    EXPECT_EQ(five.num_parent_sets(v), subsets_up_to(5, 2));
    // The five best are among the twenty best.
    for (int u : five.candidates(v)) EXPECT_GE(table.candidate_position(v, u), 0);
  }
  // n <= 20: every other variable is a candidate.
  const DataTable small = testing_util::random_discrete_data(8, 200, 2, 3);
  const ScoreTable all = score_data(small, ScoreOptions{});
  for (int v = 0; v < 8; ++v) EXPECT_EQ(all.candidates(v).size(), 7u);
  options.candidates = 65;
  EXPECT_THROW(compute_scores(*score, data.variables(), data.num_rows(), options, {}), InputError);
}

std::string constraint_error(const std::string& forbid, const std::string& require,
                             const std::vector<Variable>& vars) {
  testing_util::TempDir dir;
  testing_util::write_file(dir.file("f.tsv"), forbid);
  testing_util::write_file(dir.file("r.tsv"), require);
  try {
    read_edge_constraints(dir.file("f.tsv"), dir.file("r.tsv"), vars);
  } catch (const InputError& e) {
    const std::string what = e.what();
    const std::string dir_prefix = dir.path() + "/";
    std::string out = what;
    for (std::size_t p; (p = out.find(dir_prefix)) != std::string::npos;)
      out.erase(p, dir_prefix.size());
    return out;
  }
  return "";
}

TEST(EdgeConstraints, FileErrorsNameTheLine) {
  const DataTable data = testing_util::random_discrete_data(4, 50, 2, 4);
  const auto& vars = data.variables();  // X0..X3
  const std::vector<std::tuple<std::string, std::string, std::string>> cases = {
      {"X0\tX9\n", "", "f.tsv:1: unknown variable 'X9'"},
      {"# comment\n\nX0 X1\n", "", "f.tsv:3: expected 2 tab-separated fields (from, to), found 1"},
      {"X0\tX1\tX2\n", "", "f.tsv:1: expected 2 tab-separated fields (from, to), found 3"},
      {"", "X2\tX2\n", "r.tsv:1: edge 'X2' -> 'X2' is a self-loop"},
      {"X0\tX1\n", "X2\tX3\r\nX0\tX1\r\n",
       "r.tsv:2: required edge 'X0' -> 'X1' is also forbidden (f.tsv:1)"},
      {"", "X0\tX1\nX1\tX2\nX2\tX0\n",
       "the required edges form a directed cycle: X0 -> X1 -> X2 -> X0"},
  };
  for (const auto& [forbid, require, fragment] : cases) {
    const std::string e = constraint_error(forbid, require, vars);
    EXPECT_NE(e.find(fragment), std::string::npos)
        << "expected '" << fragment << "', got '" << e << "'";
  }
  EXPECT_EQ(constraint_error("X0\tX1\n", "X1\tX0\n# fine\n", vars), "");
}

TEST(EdgeConstraints, ForbiddenAndRequiredEdgesShapeTheTable) {
  const DataTable data = testing_util::random_discrete_data(6, 300, 3, 6);
  const auto score = make_bdeu(data, 1.0);
  const ScoreTable free = compute_scores(*score, data.variables(), data.num_rows(), {}, {});
  ScoreOptions options;
  options.constraints.forbidden = {{0, 3, "f:1"}, {1, 3, "f:2"}};
  options.constraints.required = {{2, 3, "r:1"}, {4, 0, "r:2"}};
  const ScoreTable t = compute_scores(*score, data.variables(), data.num_rows(), options, {});
  // Node 3: candidates {2, 4, 5} (0 and 1 forbidden); every set contains 2; |S| <= 3.
  EXPECT_EQ(t.candidate_position(3, 0), -1);
  EXPECT_EQ(t.candidate_position(3, 1), -1);
  EXPECT_EQ(t.num_parent_sets(3), subsets_up_to(2, 2));
  for (ParentMask g : t.global_parent_sets(3)) {
    EXPECT_TRUE(g >> 2 & 1);
    const double same = free.log_score_global(3, g);  // same values, fewer sets
    EXPECT_NEAR(t.log_score_global(3, g), same, 1e-12 * std::abs(same));
  }
  EXPECT_EQ(t.num_parent_sets(0), subsets_up_to(4, 2));
  for (ParentMask g : t.global_parent_sets(0)) {
    EXPECT_TRUE(g >> 4 & 1);
    // The required parent (4) is counted before the optional ones (1, 2, 3, 5): same values.
    const double same = free.log_score_global(0, g);
    EXPECT_NEAR(t.log_score_global(0, g), same, 1e-12 * std::abs(same));
  }
  EXPECT_EQ(t.num_parent_sets(1), free.num_parent_sets(1));
  // Required parents beyond the in-degree bound are refused.
  options.max_indegree = 0;
  try {
    compute_scores(*score, data.variables(), data.num_rows(), options, {});
    ADD_FAILURE() << "accepted required parents above --max-indegree";
  } catch (const OptionError& e) {
    EXPECT_NE(e.message_template().find("node 'X0' has 1 required parents ({require}), more than "
                                        "{max_indegree} 0"),
              std::string::npos)
        << e.what();
  }
}

void expect_bit_identical(const ScoreTable& a, const ScoreTable& b) {
  ASSERT_EQ(a.num_variables(), b.num_variables());
  EXPECT_EQ(a.fingerprint(), b.fingerprint());
  for (int v = 0; v < a.num_variables(); ++v) {
    ASSERT_EQ(a.num_parent_sets(v), b.num_parent_sets(v));
    EXPECT_EQ(std::memcmp(a.log_scores(v).data(), b.log_scores(v).data(),
                          a.num_parent_sets(v) * sizeof(double)),
              0);
    EXPECT_EQ(std::memcmp(a.parent_sets(v).data(), b.parent_sets(v).data(),
                          a.num_parent_sets(v) * sizeof(ParentMask)),
              0);
  }
}

TEST(Scoring, TablesAreBitIdenticalForAnyThreadCount) {
  const DataTable discrete = testing_util::random_discrete_data(24, 1500, 3, 8);
  const DataTable gaussian = testing_util::random_gaussian_data(22, 400, 9);
  ScoreOptions options;
  options.max_indegree = 3;
  for (const DataTable* data : {&discrete, &gaussian}) {
    ScoreTable one, two;
    {
      tbb::global_control limit(tbb::global_control::max_allowed_parallelism, 1);
      one = score_data(*data, options);
    }
    {
      tbb::global_control limit(tbb::global_control::max_allowed_parallelism, 2);
      two = score_data(*data, options);
    }
    expect_bit_identical(one, two);
    EXPECT_GT(one.total_parent_sets(), 20000u);
  }
}

// The largest relative difference between the local scores of two tables over the same sets.
double largest_relative_difference(const ScoreTable& a, const ScoreTable& b) {
  double worst = 0;
  for (int v = 0; v < a.num_variables(); ++v) {
    EXPECT_EQ(a.num_parent_sets(v), b.num_parent_sets(v));
    for (std::size_t i = 0; i < a.num_parent_sets(v); ++i) {
      EXPECT_EQ(a.parent_sets(v)[i], b.parent_sets(v)[i]);
      const double x = a.log_scores(v)[i], y = b.log_scores(v)[i];
      worst = std::max(worst, std::abs(x - y) / std::max(1.0, std::abs(x)));
    }
  }
  return worst;
}

// Gaussian data are scale-free by default (BgeParameters::standardize): a column in other units
// (x -> 1000 x + 7) gives the same local score for every node and parent set. With raw units
// (the opt-out) the same change moves the scores, so the check can fail.
TEST(Scoring, BgeScoresDoNotDependOnUnitsByDefault) {
  const DataTable data = testing_util::random_gaussian_data(5, 200, 17);
  std::vector<std::string> names;
  std::vector<std::vector<double>> values;
  for (int v = 0; v < data.num_variables(); ++v) {
    names.push_back(data.name(v));
    values.emplace_back(data.values(v).begin(), data.values(v).end());
  }
  for (double& x : values[2]) x = 1000 * x + 7;
  const DataTable rescaled = DataTable::gaussian(names, values);
  ScoreOptions options;
  options.max_indegree = 4;
  ASSERT_TRUE(options.bge.standardize);
  EXPECT_LT(largest_relative_difference(score_data(data, options), score_data(rescaled, options)),
            1e-10);
  options.bge.standardize = false;
  EXPECT_GT(largest_relative_difference(score_data(data, options), score_data(rescaled, options)),
            1e-3);
}

TEST(Scoring, MemoryLimitStopsBeforeAllocating) {
  const DataTable data = testing_util::random_discrete_data(30, 100, 2, 10);
  ScoreOptions options;
  options.max_indegree = 3;
  options.candidates = 25;
  const ScoreEstimate estimate = estimate_scoring(data.variables(), data.num_rows(), options);
  EXPECT_EQ(estimate.parent_sets, 30.0 * subsets_up_to(25, 3));
  options.memory_limit = static_cast<std::uint64_t>(estimate.bytes / 2);
  try {
    score_data(data, options);
    ADD_FAILURE() << "no ResourceError";
  } catch (const ResourceError& e) {
    // The library names its fields ({memory_limit}); the CLI spells them as flags.
    const std::string what = e.message_template();
    for (const char* fragment :
         {"estimated", "{memory_limit}", "{max_indegree} (now 3)", "{candidates} (now 25)"})
      EXPECT_NE(what.find(fragment), std::string::npos) << what;
    EXPECT_NE(what.find(format_bytes(estimate.bytes)), std::string::npos) << what;
  }
  options.memory_limit = static_cast<std::uint64_t>(estimate.bytes * 2);
  EXPECT_EQ(score_data(data, options).total_parent_sets(), 30 * subsets_up_to(25, 3));
}

// A batch job's share of a node, given once in the environment, bounds every default check.
TEST(Memory, EnvironmentVariableSetsTheDefaultLimit) {
  const std::uint64_t physical_default = default_memory_limit();
  ::setenv("COVEY_MEMORY_LIMIT", "3M", 1);
  EXPECT_EQ(default_memory_limit(), std::uint64_t{3} << 20);
  EXPECT_THROW(require_memory(4.0 * (1 << 20), 0, "table", "a smaller --candidates"),
               ResourceError);
  ::setenv("COVEY_MEMORY_LIMIT", "plenty", 1);
  try {
    default_memory_limit();
    ADD_FAILURE() << "a malformed COVEY_MEMORY_LIMIT was accepted";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("COVEY_MEMORY_LIMIT"), std::string::npos) << e.what();
  }
  ::unsetenv("COVEY_MEMORY_LIMIT");
  EXPECT_EQ(default_memory_limit(), physical_default);
}

TEST(Memory, SizesParseWithBinarySuffixes) {
  EXPECT_EQ(parse_memory_size("512M", "--memory-limit"), 512ull << 20);
  EXPECT_EQ(parse_memory_size("4G", "--memory-limit"), 4ull << 30);
  EXPECT_EQ(parse_memory_size("1.5GiB", "--memory-limit"), 3ull << 29);
  EXPECT_EQ(parse_memory_size("2kb", "--memory-limit"), 2048u);
  EXPECT_EQ(parse_memory_size("100000", "--memory-limit"), 100000u);
  for (const char* bad : {"", "G", "-1G", "4X", "4GG", "abc", "0"})
    EXPECT_THROW(parse_memory_size(bad, "--memory-limit"), InputError) << bad;
  EXPECT_GT(default_memory_limit(), 0u);
  EXPECT_LT(default_memory_limit(), physical_memory_bytes());
}

}  // namespace
}  // namespace covey
