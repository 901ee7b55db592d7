// The cover-bounded engines, teleports and --cover-limit on more than 64 variables (wide vertex
// sets), at n = 100 and k = 2.
//
// Ground truth by embedding: a 5-variable table placed on 5 of 100 variables whose other 95 may
// take only the empty parent set. Every DAG of the big table is a DAG of the core plus 95
// isolated vertices, an isolated vertex is a sink and so never in a split, and its weight is a
// constant factor: so U, Z_k, the cover-set weights, the exact draws, the best DAG and the chains'
// posterior are those of the core (enumerated: for_each_dag, checked against OEIS A003024),
// relabelled. The core's vertices sit across 64-bit word boundaries.
#include <gtest/gtest.h>

#include <algorithm>
#include <bit>
#include <cmath>
#include <map>

#include "../chains/chain_testing.hpp"
#include "chain_oracles.hpp"
#include "cover_test_util.hpp"
#include "covey/chains/structure_chain.hpp"
#include "covey/exact/cover_best.hpp"
#include "covey/exact/cover_draws.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "covey/graph/cover_class.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

constexpr int kWide = 100;
constexpr int kCore = 5;
constexpr int kPlace[kCore] = {2, 63, 64, 65, 99};
constexpr int kCover = 2;

struct Embedded {
  ScoreTable core, wide;
  double log_isolated = 0;  // sum of the isolated vertices' empty-set scores
};

Embedded embedded_table(std::uint64_t seed) {
  Embedded e;
  e.core = cover_testing::restricted_table(kCore, 3, seed, 0.8);
  std::vector<Variable> variables(kWide);
  std::vector<NodeScores> nodes(kWide);
  std::vector<int> core_of(kWide, -1);
  for (int c = 0; c < kCore; ++c) core_of[kPlace[c]] = c;
  Rng rng = make_stream(seed, 7);
  for (int v = 0; v < kWide; ++v) {
    variables[v].name = "x" + std::to_string(v);
    const int c = core_of[v];
    if (c < 0) {
      nodes[v].masks = {0};
      nodes[v].log_scores = {-3.0 * uniform01(rng)};
      e.log_isolated += nodes[v].log_scores[0];
      continue;
    }
    for (int u : e.core.candidates(c)) nodes[v].candidates.push_back(kPlace[u]);
    nodes[v].masks.assign(e.core.parent_sets(c).begin(), e.core.parent_sets(c).end());
    nodes[v].log_scores.assign(e.core.log_scores(c).begin(), e.core.log_scores(c).end());
  }
  e.wide = ScoreTable(std::move(variables), std::move(nodes));
  return e;
}

// The core DAG of a DAG of the wide table; fails the test when an edge leaves the core.
Dag core_of(const Dag& wide) {
  Dag core(kCore);
  int edges = 0;
  for (int c = 0; c < kCore; ++c)
    for (int d = 0; d < kCore; ++d)
      if (wide.has_edge(kPlace[c], kPlace[d])) core.add_edge(c, d), ++edges;
  EXPECT_EQ(edges, wide.num_edges()) << "an edge outside the embedded core";
  return core;
}

VertexList placed(const VertexList& core_list) {
  VertexList out;
  for (int c : core_list) out.push_back(kPlace[c]);
  return out;
}

TEST(CoverWide, SamplerAtN100K2MatchesItsEmbeddedCore) {
  const Embedded e = embedded_table(41);
  const CoverSampler narrow = CoverSampler::build(e.core, kCover);
  const CoverSampler wide = CoverSampler::build(e.wide, kCover);
  EXPECT_EQ(wide.num_cover_sets(), 1u + 100u + 4950u);
  EXPECT_NEAR(wide.log_upper_bound(), narrow.log_upper_bound() + e.log_isolated, 1e-9);
  for (int a = -1; a < kCore; ++a)
    for (int b = a + 1; b < kCore; ++b) {
      VertexList core_cover;
      if (a >= 0) core_cover.push_back(a);
      core_cover.push_back(b);
      const double want = narrow.log_cover_weight(core_cover);
      const double got = wide.log_cover_weight(placed(core_cover));
      if (want == -INFINITY)
        EXPECT_EQ(got, -INFINITY);
      else
        EXPECT_NEAR(got, want + e.log_isolated, 1e-9);
    }
  // A cover set holding an isolated vertex (a sink) carries no split.
  EXPECT_EQ(wide.log_cover_weight({0, 2}), -INFINITY);

  // Exact draws against the enumerated D_2 posterior of the core (chi-square, fixed seed), and
  // each draw in D_2 by the wide membership test.
  const testing_util::BruteForceCoverClass d2(kCover);
  const testing_util::ExactPosterior exact = testing_util::exact_posterior(e.core, &d2);
  std::vector<std::uint64_t> counts(exact.dags.size(), 0);
  Rng rng = make_stream(4100, 0);
  constexpr std::size_t kDraws = 20000;
  std::uint64_t outside = 0, trials = 0;
  for (std::size_t i = 0; i < kDraws; ++i) {
    const Dag g = wide.draw(rng, &trials);
    if (i < 200) {
      ASSERT_TRUE(in_cover_class(g, kCover));
    }
    const auto it = exact.index.find(core_of(g).words());
    if (it == exact.index.end()) {
      ++outside;
      continue;
    }
    ++counts[it->second];
  }
  EXPECT_EQ(outside, 0u);
  EXPECT_GT(cover_testing::chi_square_p_value(exact.prob, counts, kDraws), 1e-4);
  // Broken variant: every trial accepted (no canonical-split test), so DAGs with several splits
  // come too often. The same test must reject it.
  std::vector<std::uint64_t> broken(exact.dags.size(), 0);
  for (std::size_t i = 0; i < kDraws; ++i) {
    const auto it = exact.index.find(core_of(wide.draw_proposal(rng)).words());
    ASSERT_NE(it, exact.index.end());
    ++broken[it->second];
  }
  EXPECT_LT(cover_testing::chi_square_p_value(exact.prob, broken, kDraws), 1e-6);

  // The draws file keeps wide DAGs (ceil(100 / 64) = 2 words per variable).
  testing_util::TempDir dir;
  CoverDrawsFile file;
  file.variables = variable_names(e.wide.variables());
  file.cover_bound = kCover;
  file.table_fingerprint = e.wide.fingerprint();
  file.trials = 3;
  file.log_upper_bound = wide.log_upper_bound();
  for (int i = 0; i < 3; ++i) {
    file.dags.push_back(wide.draw(rng));
    file.log_weights.push_back(log_weight(e.wide, file.dags.back()));
  }
  file.total_weight = estimate_log_total_weight(file.log_upper_bound, 3, 3);
  write_cover_draws(dir.file("wide.h5"), file);
  EXPECT_EQ(read_cover_draws(dir.file("wide.h5")).dags, file.dags);
}

TEST(CoverWide, BestDagAtN100K2IsTheCoresBest) {
  const Embedded e = embedded_table(42);
  const CoverBestResult narrow = best_dag_in_cover_class(e.core, kCover);
  const CoverBestResult wide = best_dag_in_cover_class(e.wide, kCover);
  EXPECT_NEAR(wide.log_score, narrow.log_score + e.log_isolated, 1e-9);
  EXPECT_EQ(core_of(wide.dag), narrow.dag);
  EXPECT_EQ(wide.cover, placed(narrow.cover));
  EXPECT_TRUE(in_cover_class(wide.dag, kCover));
}

// D_k as a class and as exact teleports, as the chain runner builds them (chain_support.cpp).
class WideCoverClass : public DagClass {
 public:
  bool contains(const Dag& dag) const override { return in_cover_class(dag, kCover); }
};

class WideTeleport : public TeleportSource {
 public:
  explicit WideTeleport(const CoverSampler& sampler) : sampler_(sampler) {}
  const DagClass& support() const override { return class_; }
  Dag draw(Rng& rng) const override { return sampler_.draw(rng); }

 private:
  const CoverSampler& sampler_;
  WideCoverClass class_;
};

TEST(CoverWide, ChainWithTeleportsInsideCoverLimitAtN100K2MatchesTheCore) {
  // A chain on the wide table restricted to D_2 and teleporting from the exact D_2 sampler: its
  // edge frequencies on the core agree with the core's enumerated D_2 posterior within 4 MCSE
  // (batch means), and it never leaves D_2.
  const Embedded e = embedded_table(43);
  const CoverSampler sampler = CoverSampler::build(e.wide, kCover);
  const WideTeleport teleport(sampler);
  const WideCoverClass restriction;
  ChainConfig config;
  config.teleport = &teleport;
  config.teleport_rate = 0.05;
  config.restriction = &restriction;
  config.rev_rate = 0.05;
  StructureChain chain(e.wide, config);
  const testing_util::BruteForceCoverClass d2(kCover);
  const testing_util::ExactPosterior exact = testing_util::exact_posterior(e.core, &d2);

  constexpr int kBatches = 40, kPerBatch = 5000;
  Rng rng = make_stream(4300, 0);
  std::vector<double> batch(std::size_t(kBatches) * kCore * kCore, 0.0);
  for (int b = 0; b < kBatches; ++b)
    for (int s = 0; s < kPerBatch; ++s) {
      chain.step(rng);
      for (int u = 0; u < kCore; ++u)
        for (int v = 0; v < kCore; ++v)
          if (chain.has_edge(kPlace[u], kPlace[v]))
            batch[(std::size_t(b) * kCore + u) * kCore + v] += 1.0 / kPerBatch;
    }
  EXPECT_TRUE(chain.check_invariants());
  EXPECT_TRUE(in_cover_class(chain.dag(), kCover));
  EXPECT_GT(chain.counts().accepted[int(Move::kTeleport)], 100u);
  double max_z = 0;
  for (int u = 0; u < kCore; ++u)
    for (int v = 0; v < kCore; ++v) {
      if (u == v) continue;
      double mean = 0, var = 0;
      for (int b = 0; b < kBatches; ++b) mean += batch[(std::size_t(b) * kCore + u) * kCore + v];
      mean /= kBatches;
      for (int b = 0; b < kBatches; ++b)
        var += std::pow(batch[(std::size_t(b) * kCore + u) * kCore + v] - mean, 2);
      const double mcse = std::sqrt(var / (kBatches - 1) / kBatches);
      const double want = exact.edge[std::size_t(u) * kCore + v];
      if (mcse > 0)
        max_z = std::max(max_z, std::abs(mean - want) / mcse);
      else
        EXPECT_NEAR(mean, want, 1e-12);
    }
  EXPECT_LT(max_z, 4.0);
}

TEST(CoverWide, DenseTableAtN100K2DrawsLieInTheClassBelowTheBestDag) {
  // A table where every variable has 4 candidates (in-degree <= 2): draws are DAGs of D_2 with
  // their canonical split, none scores above the best DAG of D_2, which is itself in D_2.
  Rng rng = make_stream(44, 0);
  std::vector<Variable> variables(kWide);
  std::vector<NodeScores> nodes(kWide);
  for (int v = 0; v < kWide; ++v) {
    variables[v].name = "y" + std::to_string(v);
    while (nodes[v].candidates.size() < 4) {
      const int u = static_cast<int>(uniform_below(rng, kWide));
      if (u != v && std::find(nodes[v].candidates.begin(), nodes[v].candidates.end(), u) ==
                        nodes[v].candidates.end())
        nodes[v].candidates.push_back(u);
    }
    for (ParentMask m = 0; m < 16; ++m)
      if (std::popcount(m) <= 2) {
        nodes[v].masks.push_back(m);
        nodes[v].log_scores.push_back(-2.0 * std::popcount(m) + uniform01(rng));
      }
  }
  const ScoreTable table(std::move(variables), std::move(nodes));
  const CoverSampler sampler = CoverSampler::build(table, kCover);
  const CoverBestResult best = best_dag_in_cover_class(table, kCover);
  EXPECT_TRUE(in_cover_class(best.dag, kCover));
  EXPECT_NEAR(best.log_score, log_weight(table, best.dag), 1e-9);
  for (int i = 0; i < 300; ++i) {
    const Dag g = sampler.draw(rng);
    ASSERT_TRUE(canonical_split(g, kCover).has_value());
    ASSERT_LE(log_weight(table, g), best.log_score + 1e-9);
  }
}

}  // namespace
}  // namespace covey
