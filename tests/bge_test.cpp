// BGe local scores (Geiger & Heckerman 2002, corrected by Kuipers, Moffa & Heckerman 2014).
//  * The complete DAG's total (the sum of local scores along an order) and single-node scores
//    against the Normal-Wishart posterior-predictive chain rule computed with SciPy's
//    multivariate t (tests/reference/bge_reference.py), on R's `swiss` data set (47 x 6, R's
//    datasets package), raw and standardized, default and other hyperparameters.
//  * Score equivalence: equal totals within every Markov equivalence class over all DAGs of five
//    swiss variables (8782 classes on 5 nodes: OEIS A007984), and covered edge reversals on
//    generated data.
//  * The conditional-Gaussian score of mixed tables: discrete nodes against BDeu on the discrete
//    columns, Gaussian nodes with Gaussian parents against BGe on the Gaussian columns, and with a
//    discrete parent against the SciPy chain rule applied to the rows of each configuration.
#include <gtest/gtest.h>

#include <cmath>
#include <map>
#include <numeric>

#include "covey/core/error.hpp"
#include "covey/core/random.hpp"
#include "covey/data/data.hpp"
#include "covey/graph/enumerate.hpp"
#include "covey/scores/scores.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

std::string swiss_csv(const testing_util::TempDir& dir, const std::string& expression = "swiss") {
  const std::string path = dir.file("swiss.csv");
  testing_util::write_r_dataset_csv(expression, path);
  return path;
}

// log p(D_Y) for each parameter set and each subset Y (variable indices) by SciPy's
// multivariate-t chain rule (one Python run for all).
std::vector<std::vector<double>> reference_log_marginals(
    const std::string& csv, const DataTable& data, const std::vector<std::vector<int>>& subsets,
    const std::vector<BgeParameters>& parameters, const testing_util::TempDir& dir) {
  nlohmann::json queries = nlohmann::json::array();
  for (const BgeParameters& p : parameters) {
    nlohmann::json query;
    query["alpha_mu"] = p.alpha_mu;
    query["alpha_w"] = std::isnan(p.alpha_w) ? nlohmann::json(nullptr) : nlohmann::json(p.alpha_w);
    query["standardize"] = p.standardize;
    query["subsets"] = nlohmann::json::array();
    for (const auto& s : subsets) {
      nlohmann::json names = nlohmann::json::array();
      for (int v : s) names.push_back(data.name(v));
      query["subsets"].push_back(names);
    }
    queries.push_back(query);
  }
  const std::string qpath = dir.file("bge_query.json");
  testing_util::write_file(qpath, queries.dump());
  return testing_util::run_reference_python("bge_reference.py", csv + " " + qpath)
      .get<std::vector<std::vector<double>>>();
}

TEST(Bge, SwissMatchesMultivariateTChainRule) {
  testing_util::TempDir dir;
  const std::string csv = swiss_csv(dir);
  const DataTable data = read_csv(csv);
  ASSERT_EQ(data.kind(), VariableKind::kGaussian);
  ASSERT_EQ(data.num_rows(), 47u);
  ASSERT_EQ(data.num_variables(), 6);
  BgeParameters raw;  // the formula in the data's own units (--raw-units)
  raw.standardize = false;
  BgeParameters other = raw;
  other.alpha_mu = 2.5;
  other.alpha_w = 11;
  BgeParameters standardized;  // the default
  ASSERT_TRUE(standardized.standardize);
  // The complete DAG along two orders, every single node, and a middle-sized subset.
  const std::vector<int> order1{0, 1, 2, 3, 4, 5}, order2{4, 2, 5, 0, 3, 1};
  std::vector<std::vector<int>> subsets{order1};
  for (int v = 0; v < 6; ++v) subsets.push_back({v});
  subsets.push_back({1, 3});
  subsets.push_back({1, 3, 5});
  const std::vector<BgeParameters> parameter_sets{raw, other, standardized};
  const auto reference = reference_log_marginals(csv, data, subsets, parameter_sets, dir);
  ASSERT_EQ(reference.size(), 3u);
  for (std::size_t q = 0; q < parameter_sets.size(); ++q) {
    const BgeParameters& p = parameter_sets[q];
    const std::vector<double>& expected = reference[q];
    SCOPED_TRACE("alpha_mu " + std::to_string(p.alpha_mu) + ", standardize " +
                 std::to_string(p.standardize));
    const auto score = make_bge(data, p);
    ScoreOptions options;
    options.bge = p;
    options.max_indegree = 5;
    const ScoreTable table = score_data(data, options);
    for (const auto& order : {order1, order2}) {
      double by_score = 0, by_table = 0;
      ParentMask before = 0;
      for (std::size_t i = 0; i < order.size(); ++i) {
        const std::vector<int> parents(order.begin(), order.begin() + i);
        by_score += score->log_marginal(order[i], parents);
        by_table += table.log_score_global(order[i], before);
        before |= ParentMask{1} << order[i];
      }
      EXPECT_NEAR(by_score, expected[0], 1e-9 * std::abs(expected[0]));
      EXPECT_NEAR(by_table, expected[0], 1e-9 * std::abs(expected[0]));
    }
    for (int v = 0; v < 6; ++v)
      EXPECT_NEAR(table.log_score_global(v, 0), expected[1 + v], 1e-9 * std::abs(expected[1 + v]));
    // A local score is a ratio of two subset marginals: s_5({1,3}) = log p(D_135) - log p(D_13).
    const double local = expected[8] - expected[7];
    EXPECT_NEAR(table.log_score_global(5, 0b1010), local, 1e-9 * std::abs(local));
  }
}

TEST(Bge, RefusesBadHyperparameters) {
  const DataTable data = testing_util::random_gaussian_data(3, 20, 1);
  BgeParameters p;
  p.alpha_w = 4;  // must exceed n + 1 = 4
  EXPECT_THROW(make_bge(data, p), InputError);
  p.alpha_w = 4.5;
  EXPECT_NO_THROW(make_bge(data, p));
  p.alpha_mu = 0;
  EXPECT_THROW(make_bge(data, p), InputError);
  EXPECT_THROW(make_bge(testing_util::random_discrete_data(3, 20, 2, 1), {}), InputError);
  BgeParameters standardize;
  standardize.standardize = true;
  EXPECT_THROW(make_bge(DataTable::gaussian({"a", "b"}, {{1, 1, 1}, {1, 2, 3}}), standardize),
               InputError);
}

TEST(Bge, MarkovEquivalentDagsScoreEqualOnSwiss) {
  testing_util::TempDir dir;
  const DataTable data = read_csv(swiss_csv(dir, "swiss[, 1:5]"));
  ASSERT_EQ(data.num_variables(), 5);
  ScoreOptions options;
  options.max_indegree = 4;
  const ScoreTable table = score_data(data, options);
  std::map<std::string, std::pair<double, double>> range;
  for_each_dag(table, [&](const Dag& dag, double w) {
    auto [it, fresh] =
        range.emplace(testing_util::markov_equivalence_key(dag), std::make_pair(w, w));
    it->second.first = std::min(it->second.first, w);
    it->second.second = std::max(it->second.second, w);
  });
  EXPECT_EQ(range.size(), 8782u);  // OEIS A007984
  for (const auto& [key, mm] : range)
    EXPECT_NEAR(mm.first, mm.second, 1e-10 * std::abs(mm.first)) << key;
}

TEST(Bge, CoveredEdgeReversalKeepsTheTotal) {
  const DataTable data = testing_util::random_gaussian_data(8, 300, 3);
  ScoreOptions options;
  options.max_indegree = 4;
  options.bge.standardize = true;
  const ScoreTable table = score_data(data, options);
  int reversals = 0;
  for (std::uint64_t seed = 0; seed < 30; ++seed) {
    const Dag dag = testing_util::random_dag(8, 3, seed);
    const double before = log_weight(table, dag);
    for (int u = 0; u < 8; ++u)
      for (int v = 0; v < 8; ++v) {
        if (!dag.has_edge(u, v) ||
            dag.parent_mask(v) != (dag.parent_mask(u) | (std::uint64_t{1} << u)))
          continue;
        Dag reversed = dag;
        reversed.remove_edge(u, v);
        reversed.add_edge(v, u);
        EXPECT_NEAR(log_weight(table, reversed), before, 1e-10 * std::abs(before));
        ++reversals;
      }
  }
  EXPECT_GT(reversals, 20);
}

// A mixed table of 60 rows: discrete d (3 levels) and e (2 levels), Gaussian g1 and g2 whose
// mean and spread depend on d.
DataTable mixed_table() {
  std::vector<Variable> variables{{"d", VariableKind::kDiscrete, {"a", "b", "c"}},
                                  {"g1", VariableKind::kGaussian, {}},
                                  {"e", VariableKind::kDiscrete, {"u", "v"}},
                                  {"g2", VariableKind::kGaussian, {}}};
  std::vector<std::vector<std::uint16_t>> codes(4);
  std::vector<std::vector<double>> values(4);
  for (int i = 0; i < 60; ++i) {
    const int d = (i * 7) % 3, e = (i * 5 + d) % 2;
    const double g1 = std::sin(1.3 * i) + d;
    const double g2 = 0.8 * g1 + 2.0 * (d == 2) + 0.3 * std::cos(2.1 * i) * (1 + d);
    codes[0].push_back(static_cast<std::uint16_t>(d));
    codes[2].push_back(static_cast<std::uint16_t>(e));
    values[1].push_back(g1);
    values[3].push_back(g2);
  }
  return DataTable::mixed(std::move(variables), std::move(codes), std::move(values));
}

TEST(ConditionalGaussian, MatchesBdeuAndBgeWithinConfigurations) {
  const DataTable data = mixed_table();
  ASSERT_TRUE(data.is_mixed());
  const BgeParameters defaults;  // standardized over all rows
  const auto cg = make_conditional_gaussian(data, 1.0, defaults);

  // Discrete nodes: BDeu over the discrete columns alone.
  const DataTable discrete =
      DataTable::discrete({data.variables()[0], data.variables()[2]},
                          {std::vector<std::uint16_t>(data.codes(0).begin(), data.codes(0).end()),
                           std::vector<std::uint16_t>(data.codes(2).begin(), data.codes(2).end())});
  const auto bdeu = make_bdeu(discrete, 1.0);
  const int d_only[] = {0}, e_only[] = {0};
  EXPECT_EQ(cg->log_marginal(2, d_only), bdeu->log_marginal(1, e_only));
  EXPECT_EQ(cg->log_marginal(0, {}), bdeu->log_marginal(0, {}));
  const int g1_only[] = {1};
  EXPECT_THROW(cg->log_marginal(0, g1_only), Error);  // a Gaussian parent of a discrete node

  // Gaussian nodes without discrete parents: BGe over the Gaussian columns alone.
  const DataTable gaussian = DataTable::gaussian(
      {"g1", "g2"}, {std::vector<double>(data.values(1).begin(), data.values(1).end()),
                     std::vector<double>(data.values(3).begin(), data.values(3).end())});
  const auto bge = make_bge(gaussian, defaults);
  const int first[] = {0};
  const double plain = bge->log_marginal(1, first);
  EXPECT_NEAR(cg->log_marginal(3, g1_only), plain, 1e-10 * std::abs(plain));

  // With the discrete parent d: the sum over d's levels of log p(D_{g1,g2}) - log p(D_{g1}) on the
  // rows of that level (each with its own prior mean), by SciPy's chain rule
  // (tests/reference/bge_reference.py) on the columns standardized over all rows.
  testing_util::TempDir dir;
  std::vector<double> mean(4), scale(4);
  for (int v : {1, 3}) {
    const auto x = data.values(v);
    mean[v] = std::accumulate(x.begin(), x.end(), 0.0) / x.size();
    double ss = 0;
    for (double y : x) ss += (y - mean[v]) * (y - mean[v]);
    scale[v] = std::sqrt(ss / (x.size() - 1));
  }
  double expected_d_g1 = 0, expected_d = 0;
  for (int level = 0; level < 3; ++level) {
    std::string csv = "g1,g2\n";
    for (std::size_t i = 0; i < data.num_rows(); ++i) {
      if (data.codes(0)[i] != level) continue;
      char row[96];
      std::snprintf(row, sizeof row, "%.17g,%.17g\n", (data.values(1)[i] - mean[1]) / scale[1],
                    (data.values(3)[i] - mean[3]) / scale[3]);
      csv += row;
    }
    const std::string path = dir.file("level" + std::to_string(level) + ".csv");
    testing_util::write_file(path, csv);
    const std::string queries = dir.file("q" + std::to_string(level) + ".json");
    testing_util::write_file(
        queries,
        R"([{"alpha_mu": 1, "alpha_w": null, "standardize": false, "subsets": [["g1", "g2"], ["g1"], ["g2"]]}])");
    const auto reference =
        testing_util::run_reference_python("bge_reference.py", path + " " + queries)[0];
    expected_d_g1 += reference[0].get<double>() - reference[1].get<double>();
    expected_d += reference[2].get<double>();
  }
  const int d_g1[] = {0, 1};
  EXPECT_NEAR(cg->log_marginal(3, d_g1), expected_d_g1, 1e-9 * std::abs(expected_d_g1));
  EXPECT_NEAR(cg->log_marginal(3, d_only), expected_d, 1e-9 * std::abs(expected_d));
  // The grouping matters: the plain BGe score (a wrong CG that ignored d) is far from it.
  EXPECT_GT(std::abs(plain - expected_d_g1), 1.0);
}

// g1 -> g2 with both children of d is covered: reversing it keeps the total, since per level of
// d the two scores add up to log p(g1, g2) - log p() (BGe is score equivalent); a reversal that
// is not covered changes it.
TEST(ConditionalGaussian, CoveredGaussianEdgeReversalKeepsTheTotal) {
  const DataTable data = mixed_table();
  const auto cg = make_conditional_gaussian(data, 1.0, {});
  const int d[] = {0}, d_g1[] = {0, 1}, d_g2[] = {0, 3};
  const double forward = cg->log_marginal(1, d) + cg->log_marginal(3, d_g1);
  const double backward = cg->log_marginal(3, d) + cg->log_marginal(1, d_g2);
  EXPECT_NEAR(forward, backward, 1e-10 * std::abs(forward));
  // Not covered (d -> g1 -> g2 against the v-structure d -> g1 <- g2): the totals differ.
  const int g1[] = {1}, d_g2_only[] = {0, 3};
  const double chain = cg->log_marginal(1, d) + cg->log_marginal(3, g1);
  const double collider = cg->log_marginal(3, {}) + cg->log_marginal(1, d_g2_only);
  EXPECT_GT(std::abs(chain - collider), 1e-3);
}

TEST(ConditionalGaussian, GaussianColumnsAreNeverParentsOfDiscreteOnes) {
  const DataTable data = mixed_table();
  ScoreOptions options;
  options.max_indegree = 3;
  const ScoreTable table = score_data(data, options);
  EXPECT_EQ(table.metadata().score, "cg");
  for (int v : {0, 2}) {
    for (int u : table.candidates(v)) EXPECT_EQ(table.variables()[u].kind, VariableKind::kDiscrete);
    EXPECT_EQ(table.num_parent_sets(v), 2u);  // {} and the other discrete node
  }
  EXPECT_EQ(table.num_parent_sets(1), 8u);  // every subset of the three others
  options.constraints.required.push_back({1, 0, "test"});
  EXPECT_THROW(score_data(data, options), InputError);
}

}  // namespace
}  // namespace covey
