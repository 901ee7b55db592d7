// BDeu local scores (Heckerman, Geiger & Chickering 1995).
//  * Values against an independent computation with SciPy's gammaln
//    (tests/reference/bdeu_reference.py) on R's `Titanic` table (datasets package; the table is
//    from Dawson 1995), expanded by R at test time to one row per person: 2201 rows.
//  * Score equivalence: equal totals within every Markov equivalence class, over all DAGs of the
//    Titanic variables (enumeration; the 185 classes on 4 nodes are OEIS A007984), and unchanged
//    totals under covered edge reversals (Chickering 1995) on generated data.
#include <gtest/gtest.h>

#include <cmath>
#include <map>

#include "covey/core/error.hpp"
#include "covey/core/random.hpp"
#include "covey/data/data.hpp"
#include "covey/graph/enumerate.hpp"
#include "covey/scores/scores.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

constexpr const char* kTitanicR =
    "local({d <- as.data.frame(Titanic); d[rep(seq_len(nrow(d)), d$Freq), 1:4]})";

std::string titanic_csv(const testing_util::TempDir& dir) {
  const std::string path = dir.file("titanic.csv");
  testing_util::write_r_dataset_csv(kTitanicR, path);
  return path;
}

// Every subset of the other variables, as name lists, for each node.
std::vector<std::pair<int, std::vector<int>>> all_families(int n) {
  std::vector<std::pair<int, std::vector<int>>> out;
  for (int v = 0; v < n; ++v)
    for (unsigned m = 0; m < (1u << n); ++m) {
      if (m >> v & 1) continue;
      std::vector<int> parents;
      for (int u = 0; u < n; ++u)
        if (m >> u & 1) parents.push_back(u);
      out.push_back({v, parents});
    }
  return out;
}

// SciPy's BDeu values for these families at each equivalent sample size (size-major order).
std::vector<double> reference_bdeu(const std::string& csv, const DataTable& data,
                                   const std::vector<std::pair<int, std::vector<int>>>& families,
                                   const std::vector<double>& sizes,
                                   const testing_util::TempDir& dir) {
  nlohmann::json queries = nlohmann::json::array();
  for (double ess : sizes)
    for (const auto& [v, parents] : families) {
      nlohmann::json names = nlohmann::json::array();
      for (int u : parents) names.push_back(data.name(u));
      queries.push_back({{"child", data.name(v)}, {"parents", names}, {"ess", ess}});
    }
  const std::string qpath = dir.file("queries.json");
  testing_util::write_file(qpath, queries.dump());
  return testing_util::run_reference_python("bdeu_reference.py", csv + " " + qpath)
      .get<std::vector<double>>();
}

TEST(Bdeu, TitanicMatchesScipyGammaln) {
  testing_util::TempDir dir;
  const std::string csv = titanic_csv(dir);
  const DataTable data = read_csv(csv);
  ASSERT_EQ(data.num_rows(), 2201u);  // the Titanic table's total count
  ASSERT_EQ(data.num_variables(), 4);
  EXPECT_EQ(data.name(0), "Class");
  EXPECT_EQ(data.variables()[0].levels, (std::vector<std::string>{"1st", "2nd", "3rd", "Crew"}));
  const auto families = all_families(4);
  const std::vector<double> sizes{1.0, 10.0, 0.25};
  const std::vector<double> reference = reference_bdeu(csv, data, families, sizes, dir);
  ASSERT_EQ(reference.size(), families.size() * sizes.size());
  for (std::size_t e = 0; e < sizes.size(); ++e) {
    const double ess = sizes[e];
    SCOPED_TRACE("ess " + std::to_string(ess));
    const std::vector<double> expected(reference.begin() + e * families.size(),
                                       reference.begin() + (e + 1) * families.size());
    const auto score = make_bdeu(data, ess);
    ScoreOptions options;
    options.equivalent_sample_size = ess;
    const ScoreTable table = score_data(data, options);
    for (std::size_t i = 0; i < families.size(); ++i) {
      const auto& [v, parents] = families[i];
      const double tol = 1e-9 * std::abs(expected[i]);
      EXPECT_NEAR(score->log_marginal(v, parents), expected[i], tol);
      ParentMask global = 0;
      for (int u : parents) global |= ParentMask{1} << u;
      EXPECT_NEAR(table.log_score_global(v, global), expected[i], tol);
    }
  }
}

// Columns with many levels take the general counting route (relabelled configurations, sorted
// keys); those values must match SciPy as well.
TEST(Bdeu, ManyLevelsMatchScipyGammaln) {
  Rng rng = make_stream(99, 0);
  const int levels[] = {100, 100, 2, 300, 100};
  std::string text = "A,B,Y,Z,C\n";
  for (int i = 0; i < 2000; ++i) {
    const auto a = uniform_below(rng, 100);
    for (int j = 0; j < 5; ++j) {
      // Y depends on A so that the scores are not all alike.
      const auto x = j == 2 ? (a + uniform_below(rng, 3)) % 2 : uniform_below(rng, levels[j]);
      text += (j ? ",L" : "L") + std::to_string(j == 0 ? a : x);
    }
    text += '\n';
  }
  testing_util::TempDir dir;
  const std::string csv = dir.file("levels.csv");
  testing_util::write_file(csv, text);
  const DataTable data = read_csv(csv);
  const std::vector<std::pair<int, std::vector<int>>> families = {
      {2, {0, 1}}, {2, {0, 1, 4}}, {3, {0, 1}}, {3, {4, 0, 1}}, {0, {3}}, {4, {}}, {2, {3, 0}}};
  const std::vector<double> expected = reference_bdeu(csv, data, families, {1.0}, dir);
  const auto score = make_bdeu(data, 1.0);
  for (std::size_t i = 0; i < families.size(); ++i)
    EXPECT_NEAR(score->log_marginal(families[i].first, families[i].second), expected[i],
                1e-9 * std::abs(expected[i]))
        << "family " << i;
  // And through the table (the walk hands big spaces to the general route).
  ScoreOptions options;
  const ScoreTable table = score_data(data, options);
  EXPECT_NEAR(table.log_score_global(2, 0b10011), expected[1], 1e-9 * std::abs(expected[1]));
  EXPECT_NEAR(table.log_score_global(3, 0b10011), expected[3], 1e-9 * std::abs(expected[3]));
}

// Score equivalence over all DAGs: Markov-equivalent DAGs have equal totals (uniform prior).
void expect_equal_totals_per_class(const ScoreTable& table, std::size_t expected_classes) {
  std::map<std::string, std::pair<double, double>> range;  // class -> (min, max)
  const std::uint64_t dags = for_each_dag(table, [&](const Dag& dag, double w) {
    auto [it, fresh] =
        range.emplace(testing_util::markov_equivalence_key(dag), std::make_pair(w, w));
    it->second.first = std::min(it->second.first, w);
    it->second.second = std::max(it->second.second, w);
  });
  EXPECT_GT(dags, range.size());
  EXPECT_EQ(range.size(), expected_classes);  // OEIS A007984
  for (const auto& [key, mm] : range)
    EXPECT_NEAR(mm.first, mm.second, 1e-10 * std::abs(mm.first)) << key;
}

TEST(Bdeu, MarkovEquivalentDagsScoreEqualOnTitanic) {
  testing_util::TempDir dir;
  const DataTable data = read_csv(titanic_csv(dir));
  for (double ess : {1.0, 10.0}) {
    ScoreOptions options;
    options.equivalent_sample_size = ess;
    expect_equal_totals_per_class(score_data(data, options), 185);
  }
}

TEST(Bdeu, CoveredEdgeReversalKeepsTheTotal) {
  const DataTable data = testing_util::random_discrete_data(7, 1500, 3, 5);
  ScoreOptions options;
  options.max_indegree = 4;
  const ScoreTable table = score_data(data, options);
  int reversals = 0, changed = 0;
  for (std::uint64_t seed = 0; seed < 40; ++seed) {
    Dag dag = testing_util::random_dag(7, 3, seed);
    const double before = log_weight(table, dag);
    for (int u = 0; u < 7; ++u)
      for (int v = 0; v < 7; ++v) {
        if (!dag.has_edge(u, v)) continue;
        Dag reversed = dag;
        reversed.remove_edge(u, v);
        reversed.add_edge(v, u);
        if (!is_acyclic(reversed)) continue;
        const double after = log_weight(table, reversed);
        // Covered: Pa(v) = Pa(u) + {u}. Then the reversal stays in the equivalence class.
        if (dag.parent_mask(v) == (dag.parent_mask(u) | (std::uint64_t{1} << u))) {
          EXPECT_NEAR(after, before, 1e-10 * std::abs(before));
          ++reversals;
        } else if (std::abs(after - before) > 1e-6) {
          ++changed;  // the check can fail: other reversals do change the total
        }
      }
  }
  EXPECT_GT(reversals, 20);
  EXPECT_GT(changed, 20);
}

}  // namespace
}  // namespace covey
