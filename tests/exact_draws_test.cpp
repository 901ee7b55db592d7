// Exact draws over all DAGs: their distribution against enumeration (Pearson's chi-square with
// Boost.Math; a deliberately broken twin must fail the same test), determinism, and the shared
// draws file read back by h5py and h5dump.
#include <gtest/gtest.h>
#include <tbb/global_control.h>

#include <nlohmann/json.hpp>

#include "covey/core/error.hpp"
#include "covey/core/version.hpp"
#include "covey/exact/exact_posterior.hpp"
#include "covey/graph/draws_file.hpp"
#include "covey/scores/score_io.hpp"
#include "exact_test_util.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using exact_testing::chi_square;
using exact_testing::derive_table;
using exact_testing::enumerate_posterior;
using testing_util::random_full_table;

ExactEngine sampler_for(const ScoreTable& t) {
  ExactOptions options;
  options.draws = true;
  return ExactEngine(t, options);
}

// A table with sets missing: odd vertices must have a parent, vertex 3 never has parent 0.
ScoreTable thinned_table() {
  Rng rng = make_stream(41, 0);
  return derive_table(random_full_table(5, 2, 901), [&](int v, std::uint64_t s) {
    if (s == 0) return v % 2 == 0;
    if (v == 3 && (s & 1U)) return false;
    return uniform01(rng) < 0.7;
  });
}

TEST(ExactDraws, ChiSquareAgainstEnumerationFullTable) {
  // Source: enumeration of the 543 DAGs on 4 vertices (OEIS A003024) with their weights.
  const ScoreTable t = random_full_table(4, 3, 900);
  const auto e = enumerate_posterior(t);
  const auto draws = sampler_for(t).draw_many(100000, 1);
  const auto r = chi_square(draws, e);
  EXPECT_EQ(r.outside, 0u);
  EXPECT_GT(r.p_value, 1e-4) << "chi2=" << r.statistic << " df=" << r.degrees_of_freedom;
}

TEST(ExactDraws, ChiSquareAgainstEnumerationWithMissingSets) {
  // Source: enumeration of every DAG of the thinned table.
  const ScoreTable t = thinned_table();
  const auto e = enumerate_posterior(t);
  ASSERT_GT(e.probability.size(), 200u);
  const auto draws = sampler_for(t).draw_many(100000, 2);
  const auto r = chi_square(draws, e);
  EXPECT_EQ(r.outside, 0u);
  EXPECT_GT(r.p_value, 1e-4) << "chi2=" << r.statistic << " df=" << r.degrees_of_freedom;
}

TEST(ExactDraws, BrokenSamplerIsRejected) {
  // The broken twin of the test above: the same draws, but a draw holding the most probable
  // edge is thrown back a quarter of the time. The same chi-square test must reject it.
  const ScoreTable t = random_full_table(4, 3, 900);
  const auto e = enumerate_posterior(t);
  const ExactEngine engine = sampler_for(t);
  const ExactPosterior& post = engine.posterior();
  int best = 1;
  for (int i = 0; i < 16; ++i)
    if (post.edge_probability[i] > post.edge_probability[best]) best = i;
  const int from = best / 4, to = best % 4;
  Rng rng = make_stream(3, 0);
  std::vector<Dag> draws;
  while (draws.size() < 100000) {
    Dag d = engine.draw(rng);
    if (d.has_edge(from, to) && uniform01(rng) < 0.25) continue;
    draws.push_back(std::move(d));
  }
  const auto r = chi_square(draws, e);
  EXPECT_LT(r.p_value, 1e-4) << "chi2=" << r.statistic << " df=" << r.degrees_of_freedom;
}

TEST(ExactDraws, EdgeFrequenciesMatchExactProbabilitiesAtEightVariables) {
  // Beyond enumeration: the draws' edge and ancestor frequencies against the engine's exact
  // probabilities (a separate computation over subsets), within 5 binomial standard errors.
  const ScoreTable t = random_full_table(8, 3, 902);
  const ExactEngine engine = sampler_for(t);
  constexpr std::size_t kDraws = 20000;
  const auto draws = engine.draw_many(kDraws, 4);
  std::vector<double> edge(64, 0), anc(64, 0);
  for (const Dag& d : draws) {
    const auto am = ancestor_masks(d);
    for (int v = 0; v < 8; ++v)
      for (int u = 0; u < 8; ++u) {
        edge[u * 8 + v] += d.has_edge(u, v);
        anc[u * 8 + v] += (am[v] >> u) & 1U;
      }
  }
  const ExactPosterior& p = engine.posterior();
  auto within = [&](double count, double prob) {
    const double se = std::sqrt(std::max(prob * (1 - prob), 1e-6) / kDraws);
    return std::abs(count / kDraws - prob) < 5 * se;
  };
  for (int i = 0; i < 64; ++i) {
    EXPECT_TRUE(within(edge[i], p.edge_probability[i])) << "edge " << i;
    EXPECT_TRUE(within(anc[i], p.ancestor_probability[i])) << "ancestor " << i;
  }
}

TEST(ExactDraws, DeterministicPerSeedForAnyThreadCount) {
  const ScoreTable t = random_full_table(7, 3, 903);
  const ExactEngine engine = sampler_for(t);
  std::vector<Dag> one, two;
  {
    tbb::global_control limit(tbb::global_control::max_allowed_parallelism, 1);
    one = engine.draw_many(1000, 9);
  }
  {
    tbb::global_control limit(tbb::global_control::max_allowed_parallelism, 2);
    two = engine.draw_many(1000, 9);
  }
  EXPECT_EQ(one, two);
  const auto prefix = engine.draw_many(300, 9);
  EXPECT_TRUE(std::equal(prefix.begin(), prefix.end(), one.begin()));
  EXPECT_NE(engine.draw_many(300, 10), prefix);
  for (const Dag& d : one) EXPECT_GT(log_weight(t, d), kNegInf);
}

TEST(ExactDraws, SignedRouteCannotDraw) {
  ExactOptions options;
  options.draws = true;
  options.route = ExactRoute::kSigned;
  EXPECT_THROW(ExactEngine(random_full_table(4, 3, 1), options), InputError);
  ExactOptions no_draws;
  const ExactEngine engine(random_full_table(4, 3, 1), no_draws);
  Rng rng = make_stream(1, 0);
  EXPECT_THROW(engine.draw(rng), Error);
}

TEST(DrawsFile, RoundTripAndReadBackByH5py) {
  testing_util::TempDir dir;
  const ScoreTable t = random_full_table(6, 3, 904);
  const auto dags = sampler_for(t).draw_many(500, 5);
  std::vector<double> lw;
  for (const Dag& d : dags) lw.push_back(log_weight(t, d));
  const std::string path = dir.file("draws.h5");
  const Attributes attrs = {{"kind", std::string("exact-draws")},
                            {"seed", 5LL},
                            {"log_total_weight", -1.5},
                            {"command_line", std::string("covey exact t.h5")},
                            {"flag", true}};
  write_draws(path, t, dags, lw, attrs);

  const DrawsFile back = read_draws(path);
  EXPECT_EQ(back.kind, "exact-draws");
  EXPECT_EQ(back.dags, dags);
  EXPECT_EQ(back.log_weights, lw);
  EXPECT_EQ(back.table_fingerprint, t.fingerprint());
  EXPECT_EQ(back.attributes.at("flag"), AttributeValue(true));
  EXPECT_EQ(attribute_integer(back.attributes, "seed"), 5);
  EXPECT_EQ(attribute_number(back.attributes, "log_total_weight"), -1.5);
  EXPECT_NO_THROW(check_draws_match_table(back, t, path));
  EXPECT_THROW(check_draws_match_table(back, random_full_table(6, 3, 905), path), InputError);

  // Source: h5py, reading the file without covey.
  const auto r =
      testing_util::run_shell(std::string(COVEY_REFERENCE_PYTHON) + " " + COVEY_SOURCE_DIR +
                              "/tests/reference/read_draws.py " + path);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto py = nlohmann::json::parse(r.out);
  EXPECT_EQ(py["attributes"]["kind"], "exact-draws");
  EXPECT_EQ(py["attributes"]["format"], "covey-draws");
  EXPECT_EQ(py["attributes"]["num_draws"], 500);
  EXPECT_EQ(py["attributes"]["seed"], 5);
  EXPECT_EQ(py["parents_dtype"], "uint64");
  char hex[32];
  std::snprintf(hex, sizeof hex, "%016llx", static_cast<unsigned long long>(t.fingerprint()));
  EXPECT_EQ(py["attributes"]["table_fingerprint"], hex);
  ASSERT_EQ(py["parents"].size(), dags.size());
  for (std::size_t i = 0; i < dags.size(); ++i) {
    for (int v = 0; v < 6; ++v)
      EXPECT_EQ(py["parents"][i][v].get<std::uint64_t>(), dags[i].parent_mask(v));
    EXPECT_DOUBLE_EQ(py["log_weight"][i].get<double>(), lw[i]);
  }
  for (int v = 0; v < 6; ++v) EXPECT_EQ(py["names"][v], t.name(v));

  // Source: h5dump lists the layout's datasets with their shapes.
  const auto dump = testing_util::run_shell(std::string(COVEY_H5DUMP) + " -H " + path);
  ASSERT_EQ(dump.exit_code, 0) << dump.err;
  EXPECT_NE(dump.out.find("DATASET \"parents\""), std::string::npos);
  EXPECT_NE(dump.out.find("( 500, 6 )"), std::string::npos) << dump.out;
}

TEST(DrawsFile, ExactDrawsFileHoldsTheSchemaTheReaderExpects) {
  testing_util::TempDir dir;
  const ScoreTable t = random_full_table(4, 3, 907);
  ExactOptions options;
  options.draws = true;
  const ExactEngine engine(t, options);
  const std::vector<Dag> dags = engine.draw_many(40, 11);
  const std::string path = dir.file("exact.h5");
  write_exact_draws(path, t, engine, dags, 11, "covey exact t.h5 --draws 40");

  const DrawsFile back = read_draws(path);
  EXPECT_EQ(back.kind, "exact-draws");
  EXPECT_EQ(back.dags, dags);
  ASSERT_EQ(back.log_weights.size(), dags.size());
  for (std::size_t i = 0; i < dags.size(); ++i)
    EXPECT_EQ(back.log_weights[i], log_weight(t, dags[i]));
  EXPECT_NO_THROW(check_draws_match_table(back, t, path));
  const Attributes& a = back.attributes;
  EXPECT_EQ(attribute_integer(a, "seed"), 11);
  EXPECT_EQ(attribute_integer(a, "draws_per_stream"),
            static_cast<long long>(ExactEngine::kDrawsPerStream));
  EXPECT_EQ(attribute_number(a, "log_total_weight"), engine.posterior().log_total_weight);
  EXPECT_EQ(attribute_string(a, "route"), std::string(to_string(engine.plan().route)));
  EXPECT_EQ(attribute_string(a, "command_line"), "covey exact t.h5 --draws 40");
  EXPECT_EQ(attribute_string(a, "covey_version"), std::string(kVersion));
}

TEST(DrawsFile, NotADrawsFileIsAnInputError) {
  testing_util::TempDir dir;
  const ScoreTable t = random_full_table(3, 2, 906);
  write_scores_hdf5(t, dir.file("scores.h5"));
  EXPECT_THROW(read_draws(dir.file("scores.h5")), InputError);
  testing_util::run_shell("echo hello > " + dir.file("text.h5"));
  EXPECT_THROW(read_draws(dir.file("text.h5")), InputError);
  EXPECT_THROW(read_draws(dir.file("missing.h5")), InputError);
  // A kind is required.
  EXPECT_THROW(write_draws(dir.file("x.h5"), t, {}, {}, Attributes{}), Error);
}

}  // namespace
}  // namespace covey
