// Stationarity of the structure chain against full enumeration of all DAGs (n = 4 and 5, fixed
// seeds): edge probabilities within 4 Monte Carlo standard errors (batch means, 50 batches), and
// for n = 4 the total variation distance of DAG frequencies. Each kernel is checked on its own
// and mixed (local moves, REV, teleports, a restricted target), and each check is shown to fail
// when the kernel's Hastings factor is dropped (the test-only hook).
#include <gtest/gtest.h>

#include <bit>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <functional>
#include <iterator>
#include <map>
#include <string>
#include <unordered_map>

#include "../chains/chain_testing.hpp"
#include "../chains/move_kernels.hpp"
#include "chain_oracles.hpp"
#include "covey/chains/structure_chain.hpp"
#include "covey/core/error.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::BruteForceCoverClass;
using testing_util::EnumeratedTeleport;
using testing_util::ExactPosterior;

struct Comparison {
  double max_z = 0;  // largest |estimate - exact| / MCSE over all edges (and DAG bins, if any)
  double tv = -1;    // total variation of DAG frequencies (n = 4 only)
  std::string worst;
  std::uint64_t regenerations = 0;
};

constexpr int kBatches = 50;

// Mean of kBatches batch means and its Monte Carlo standard error.
std::pair<double, double> batch_mean_and_mcse(const double* means) {
  double mean = 0, var = 0;
  for (int b = 0; b < kBatches; ++b) mean += means[b];
  mean /= kBatches;
  for (int b = 0; b < kBatches; ++b) var += std::pow(means[b] - mean, 2);
  return {mean, std::sqrt(var / (kBatches - 1) / kBatches)};
}

// A chain's configuration with the tests' deliberate faults (chains/chain_testing.hpp).
struct FaultyConfig {
  FaultyConfig(const ChainConfig& config = {}, const ChainFaults& faults = {})  // NOLINT
      : config(config), faults(faults) {}
  ChainConfig config;
  ChainFaults faults;
};

// The DAG key of run_and_compare: node v's parent bits at bits [n v, n v + n).
std::uint32_t dag_key(const std::vector<std::uint64_t>& parents, int n) {
  std::uint32_t key = 0;
  for (int v = 0; v < n; ++v) key |= static_cast<std::uint32_t>(parents[v]) << (n * v);
  return key;
}

// `dag_bins` > 0 also compares the frequencies of that many classes of DAGs, each of about equal
// exact mass (the DAGs sorted by probability and cut into consecutive runs), so that every DAG,
// not only the edge marginals, enters the check (n = 5 has too many DAGs for a TV distance).
Comparison run_and_compare(const ScoreTable& table, const FaultyConfig& setup,
                           const ExactPosterior& exact, std::uint64_t steps, std::uint64_t seed,
                           const Dag* start = nullptr, bool valid_states = true, int dag_bins = 0) {
  const int n = table.num_variables();
  StructureChain chain = make_faulty_chain(table, setup.config, setup.faults);
  if (start) chain.set_dag(*start);
  Rng rng = make_stream(seed, 0);
  for (int s = 0; s < 10000; ++s) chain.step(rng);  // burn-in
  const std::uint64_t batch_len = steps / kBatches;
  std::vector<double> batch_means(std::size_t(n) * n * kBatches, 0.0);
  std::vector<std::uint32_t> dag_counts(n == 4 ? (1u << 16) : 0, 0);
  std::vector<std::uint64_t> words(n);
  std::vector<std::uint32_t> in_batch(std::size_t(n) * n, 0);
  std::unordered_map<std::uint32_t, int> bin_of;
  std::vector<double> bin_mass(dag_bins, 0.0), bin_means(std::size_t(dag_bins) * kBatches, 0.0);
  std::vector<std::uint32_t> bin_in_batch(dag_bins, 0);
  if (dag_bins > 0) {
    std::vector<std::size_t> order(exact.dags.size());
    for (std::size_t g = 0; g < order.size(); ++g) order[g] = g;
    std::sort(order.begin(), order.end(),
              [&](std::size_t a, std::size_t b) { return exact.prob[a] < exact.prob[b]; });
    double below = 0;
    for (std::size_t g : order) {
      const int bin = std::min(dag_bins - 1, static_cast<int>(below * dag_bins));
      bin_of[dag_key(exact.dags[g].words(), n)] = bin;
      bin_mass[bin] += exact.prob[g];
      below += exact.prob[g];
    }
  }
  Comparison out;
  for (int b = 0; b < kBatches; ++b) {
    std::fill(in_batch.begin(), in_batch.end(), 0);
    std::fill(bin_in_batch.begin(), bin_in_batch.end(), 0);
    for (std::uint64_t s = 0; s < batch_len; ++s) {
      out.regenerations += chain.step(rng);
      chain.write_parents(words.data());
      std::uint32_t key = 0;
      for (int v = 0; v < n; ++v) {
        key |= static_cast<std::uint32_t>(words[v]) << (n * v);
        for (std::uint64_t m = words[v]; m; m &= m - 1) ++in_batch[std::countr_zero(m) * n + v];
      }
      if (!dag_counts.empty()) ++dag_counts[key];
      if (dag_bins > 0) {
        const auto it = bin_of.find(key);
        if (it != bin_of.end()) ++bin_in_batch[it->second];  // else: outside the support
      }
    }
    for (std::size_t e = 0; e < in_batch.size(); ++e)
      batch_means[e * kBatches + b] = double(in_batch[e]) / double(batch_len);
    for (int k = 0; k < dag_bins; ++k)
      bin_means[std::size_t(k) * kBatches + b] = double(bin_in_batch[k]) / double(batch_len);
  }
  for (int k = 0; k < dag_bins; ++k) {
    const auto [mean, mcse] = batch_mean_and_mcse(&bin_means[std::size_t(k) * kBatches]);
    const double diff = std::abs(mean - bin_mass[k]);
    const double z = mcse > 0 ? diff / mcse : (diff < 1e-12 ? 0.0 : INFINITY);
    if (z > out.max_z) {
      out.max_z = z;
      out.worst = "DAG bin " + std::to_string(k) + " estimate " + std::to_string(mean) + " exact " +
                  std::to_string(bin_mass[k]) + " mcse " + std::to_string(mcse);
    }
  }
  if (valid_states) {
    EXPECT_TRUE(chain.check_invariants());
  }
  for (int u = 0; u < n; ++u)
    for (int v = 0; v < n; ++v) {
      if (u == v) continue;
      const std::size_t e = std::size_t(u) * n + v;
      const auto [mean, mcse] = batch_mean_and_mcse(&batch_means[e * kBatches]);
      const double diff = std::abs(mean - exact.edge[e]);
      const double z = mcse > 0 ? diff / mcse : (diff < 1e-12 ? 0.0 : INFINITY);
      if (z > out.max_z) {
        out.max_z = z;
        out.worst = std::to_string(u) + "->" + std::to_string(v) + " estimate " +
                    std::to_string(mean) + " exact " + std::to_string(exact.edge[e]) + " mcse " +
                    std::to_string(mcse);
      }
    }
  if (!dag_counts.empty()) {
    // Exact probabilities by key; DAGs outside the support have probability 0.
    std::vector<double> p(dag_counts.size(), 0.0);
    for (std::size_t g = 0; g < exact.dags.size(); ++g) {
      p[dag_key(exact.dags[g].words(), n)] = exact.prob[g];
    }
    const double total = double(batch_len) * kBatches;
    double tv = 0;
    for (std::size_t key = 0; key < p.size(); ++key)
      tv += std::abs(dag_counts[key] / total - p[key]);
    out.tv = tv / 2;
  }
  return out;
}

// Passing thresholds. TV: with about 10^5 effective draws over 543 DAGs, sampling noise alone
// gives a TV near 0.01-0.02; 0.04 leaves room for that and none for a wrong target.
constexpr double kMaxZ = 4.0;
constexpr double kMaxTv = 0.04;

bool passes(const Comparison& c) {
  if (std::getenv("COVEY_TEST_VERBOSE"))
    std::fprintf(stderr, "max z %.2f TV %.4f regen %llu\n", c.max_z, c.tv,
                 (unsigned long long)c.regenerations);
  return c.max_z <= kMaxZ && (c.tv < 0 || c.tv <= kMaxTv);
}

std::string describe(const Comparison& c) {
  return "max z " + std::to_string(c.max_z) + " (" + c.worst + "), TV " + std::to_string(c.tv);
}

constexpr std::uint64_t kSteps = 1'000'000;

// n variables with 8 random candidate parents each, in-degree <= 3, scores that favour edges
// mildly (dense enough for long ancestor chains).
ScoreTable eight_candidate_table(int n) {
  std::vector<Variable> vars;
  for (int v = 0; v < n; ++v)
    vars.push_back({"V" + std::to_string(v), VariableKind::kDiscrete, {}});
  std::vector<NodeScores> nodes(n);
  Rng rng = make_stream(5, 0);
  for (int v = 0; v < n; ++v) {
    while (nodes[v].candidates.size() < 8) {
      const int u = static_cast<int>(uniform_below(rng, n));
      if (u != v && std::find(nodes[v].candidates.begin(), nodes[v].candidates.end(), u) ==
                        nodes[v].candidates.end())
        nodes[v].candidates.push_back(u);
    }
    for (ParentMask m = 0; m < 256; ++m)
      if (std::popcount(m) <= 3) {
        nodes[v].masks.push_back(m);
        nodes[v].log_scores.push_back(uniform01(rng) * 2 - 0.3 * std::popcount(m));
      }
  }
  return ScoreTable(std::move(vars), std::move(nodes));
}

TEST(StructureChain, InvariantsAlongLongRunWithManyWords) {
  // 70 variables: two bitset words per node.
  const ScoreTable table = eight_candidate_table(70);
  ChainConfig config;
  config.rev_rate = 0.2;
  StructureChain chain(table, config);
  Rng chain_rng = make_stream(7, 1);
  for (int round = 0; round < 200; ++round) {
    for (int s = 0; s < 250; ++s) chain.step(chain_rng);
    ASSERT_TRUE(chain.check_invariants()) << "after " << (round + 1) * 250 << " steps";
  }
  EXPECT_GT(chain.num_edges(), 10u);
  const auto& c = chain.counts();
  EXPECT_GT(c.accepted[int(Move::kRev)], 0u);
  EXPECT_GT(c.accepted[int(Move::kReverse)], 0u);
  EXPECT_GT(c.accepted[int(Move::kDelete)], 0u);
}

// The ancestor sets kept by local moves alone (adds that skip the update when v already had
// u's ancestors, deletions that skip it when u stays an ancestor, rows built per word count)
// equal the ones recomputed from scratch, at every word count the chain specialises (1 to 4
// words of 64 variables) and beyond it (5 words), checked every n steps.
TEST(StructureChain, AncestorSetsOfLocalMovesMatchRecomputation) {
  for (const int n : {30, 100, 150, 200, 300}) {
    const ScoreTable table = eight_candidate_table(n);
    StructureChain chain(table, ChainConfig{});
    Rng rng = make_stream(11, static_cast<std::uint64_t>(n));
    for (int round = 0; round < 300; ++round) {
      for (int s = 0; s < n; ++s) chain.step(rng);
      ASSERT_TRUE(chain.check_invariants()) << "n " << n << ", after " << (round + 1) * n;
    }
    EXPECT_GT(chain.num_edges(), std::uint64_t(n) / 2) << "n " << n;
    const auto& c = chain.counts();
    EXPECT_GT(c.accepted[int(Move::kReverse)], 20u) << "n " << n;
    EXPECT_GT(c.accepted[int(Move::kDelete)], 100u) << "n " << n;
  }
}

// The screen of the local moves (chains/move_kernels.hpp) decides exactly as the double scores
// do and from the same draws: a chain with it and one without (the test-only switch) stay in the
// same state, with the same move counts, along 3e5 steps of local moves and REV, on a table with
// the usual shape, on one whose scores are large (BDeu-like magnitudes, where the roundings of the
// exact ratio are largest), on one with sets missing from the table and on one with a score
// range of 5000 (levels 0.15 apart, where a too small margin shows).
TEST(StructureChain, ScreenedLocalMovesFollowTheExactChain) {
  struct Variant {
    double offset;
    bool sparse;  // every third set of two or three parents left out of the table
    bool wide;    // one set per node 5000 below the others: coarse levels, a wide margin
  };
  for (const Variant variant : {Variant{0.0, false, false}, Variant{-25000.0, false, false},
                                Variant{0.0, true, false}, Variant{0.0, false, true}}) {
    const ScoreTable base = testing_util::random_full_table(9, 3, 11);
    std::vector<NodeScores> nodes(9);
    for (int v = 0; v < 9; ++v) {
      const auto cands = base.candidates(v);
      nodes[v].candidates.assign(cands.begin(), cands.end());
      const auto masks = base.parent_sets(v);
      const auto scores = base.log_scores(v);
      for (std::size_t k = 0; k < masks.size(); ++k) {
        if (variant.sparse && std::popcount(masks[k]) >= 2 && k % 3 == 0) continue;
        nodes[v].masks.push_back(masks[k]);
        const bool sunk = variant.wide && k + 1 == masks.size();
        nodes[v].log_scores.push_back(scores[k] + variant.offset - (sunk ? 5000.0 : 0.0));
      }
    }
    const ScoreTable table(base.variables(), nodes);
    ChainConfig config;
    config.rev_rate = 0.05;
    StructureChain screened_chain(table, config);
    StructureChain exact_chain =
        make_faulty_chain(table, config, ChainFaults{.exact_local_moves = true});
    ASSERT_TRUE(screened_chain.screens_local_moves());
    ASSERT_FALSE(exact_chain.screens_local_moves());
    Rng rng_a = make_stream(3, 0), rng_b = make_stream(3, 0);
    for (int s = 0; s < 300000; ++s) {
      screened_chain.step(rng_a);
      exact_chain.step(rng_b);
      if (s % 1000 == 0) {
        ASSERT_EQ(screened_chain.parents_words(), exact_chain.parents_words()) << "step " << s;
      }
    }
    EXPECT_EQ(screened_chain.counts(), exact_chain.counts());
    EXPECT_TRUE(screened_chain.check_invariants());
    EXPECT_GT(screened_chain.counts().accepted[int(Move::kAdd)], 1000u);
  }
}

// The tests' deliberate faults live in the private chains/chain_testing.hpp: no public header
// of the chains layer (so no ChainConfig, option or run-file field) carries them.
TEST(StructureChain, PublicHeadersCarryNoTestFaults) {
  const std::filesystem::path folder =
      std::filesystem::path(COVEY_SOURCE_DIR) / "include" / "covey" / "chains";
  std::size_t headers = 0;
  for (const auto& entry : std::filesystem::directory_iterator(folder)) {
    std::ifstream in(entry.path());
    const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    for (const char* word : {"for_testing", "BlockFault", "drop_hastings"})
      EXPECT_EQ(text.find(word), std::string::npos) << entry.path() << " mentions " << word;
    ++headers;
  }
  EXPECT_GE(headers, 5u);
  // A faulty chain is still made through the private header, and a fault-free one equals the
  // public constructor's chain step for step.
  const ScoreTable table = testing_util::random_full_table(5, 2, 12);
  ChainConfig config;
  config.rev_rate = 0.2;
  StructureChain plain(table, config);
  StructureChain same = make_faulty_chain(table, config, ChainFaults{});
  Rng a = make_stream(5, 0), b = make_stream(5, 0);
  for (int s = 0; s < 20000; ++s) {
    plain.step(a);
    same.step(b);
  }
  EXPECT_EQ(plain.parents_words(), same.parents_words());
  EXPECT_EQ(plain.counts(), same.counts());
}

TEST(StructureChain, RejectsInvalidStartStates) {
  const ScoreTable table = testing_util::random_full_table(4, 2, 3);
  StructureChain chain(table, {});
  Dag cyclic(4);
  cyclic.add_edge(0, 1);
  cyclic.add_edge(1, 2);
  cyclic.add_edge(2, 0);
  EXPECT_THROW(chain.set_dag(cyclic), InputError);
  Dag too_many(4);
  too_many.add_edge(0, 3);
  too_many.add_edge(1, 3);
  too_many.add_edge(2, 3);  // in-degree 3 > table's 2
  EXPECT_THROW(chain.set_dag(too_many), InputError);
  EXPECT_TRUE(chain.check_invariants());
  EXPECT_EQ(chain.num_edges(), 0u);
}

// Local moves alone, n = 4, in-degree <= 3 (all 543 DAGs).
// REV's sums and draws (chains/move_kernels.hpp) against direct computation on node 0 of a
// 12-variable table with every set of size <= 3 (232 sets: several blocks, so block skipping is
// exercised): sums within 1e-12 relative of a long double sum of exp(s), including sums of about
// e^-800 (the rescaled path), and draws by a chi-square test against the exact probabilities,
// which a draw uniform among the allowed sets (the deliberately wrong variant) fails.
double direct_log_sum(const ScoreTable& table, int v, int required, ParentMask forbidden) {
  const auto masks = table.parent_sets(v);
  const auto scores = table.log_scores(v);
  double top = -INFINITY;
  for (std::size_t k = 0; k < masks.size(); ++k)
    if ((required < 0 || ((masks[k] >> required) & 1U)) && !(masks[k] & forbidden))
      top = std::max(top, scores[k]);
  long double total = 0;
  for (std::size_t k = 0; k < masks.size(); ++k)
    if ((required < 0 || ((masks[k] >> required) & 1U)) && !(masks[k] & forbidden))
      total += std::exp(static_cast<long double>(scores[k] - top));
  return top + static_cast<double>(std::log(total));
}

// Chi-square statistic of draw counts against probabilities (cells of expectation < 5 pooled),
// divided by the p = 1e-6 bound df + 7 sqrt(2 df) (> 1: the draws do not follow `prob`).
double chi_square_ratio(const std::map<std::size_t, double>& prob,
                        const std::map<std::size_t, int>& counts, int draws) {
  double stat = 0, pooled_expected = 0, pooled_count = 0;
  int cells = 0;
  for (const auto& [k, p] : prob) {
    const double expected = p * draws;
    const double count = counts.count(k) ? counts.at(k) : 0;
    if (expected < 5) {
      pooled_expected += expected;
      pooled_count += count;
      continue;
    }
    stat += (count - expected) * (count - expected) / expected;
    ++cells;
  }
  if (pooled_expected > 0) {
    stat += (pooled_count - pooled_expected) * (pooled_count - pooled_expected) / pooled_expected;
    ++cells;
  }
  const double df = cells - 1;
  return stat / (df + 7 * std::sqrt(2 * df));
}

TEST(RevKernels, SumsAndDrawsMatchDirectComputation) {
  const ScoreTable base = testing_util::random_full_table(12, 3, 77);
  std::vector<NodeScores> nodes(12);
  for (int v = 0; v < 12; ++v) {
    const auto cands = base.candidates(v);
    nodes[v].candidates.assign(cands.begin(), cands.end());
    const auto masks = base.parent_sets(v);
    const auto scores = base.log_scores(v);
    for (std::size_t k = 0; k < masks.size(); ++k) {
      nodes[v].masks.push_back(masks[k]);
      // Node 1: sets holding candidate 0 about e^-800 below the rest (their sum underflows).
      const double shift = (v == 1 && (masks[k] & 1U)) ? -800.0 : 0.0;
      nodes[v].log_scores.push_back(scores[k] + shift);
    }
  }
  const ScoreTable table(base.variables(), nodes);
  RevTables rev(table);
  for (int v : {0, 1}) {
    for (int required : {-1, 0, 5}) {
      for (ParentMask forbidden : {ParentMask{0}, ParentMask{0x6}, ParentMask{0x7f2}}) {
        if (required >= 0 && ((forbidden >> required) & 1U)) continue;
        RevSum a{.required = required, .forbidden = forbidden, .slot = 0};
        RevSum b{.forbidden = forbidden, .slot = 1};
        rev.sum_two(v, a, b);
        const double want_a = direct_log_sum(table, v, required, forbidden);
        const double want_b = direct_log_sum(table, v, -1, forbidden);
        EXPECT_NEAR(a.log(), want_a, 1e-12 * (1 + std::abs(want_a)))
            << "v " << v << " required " << required << " forbidden " << forbidden;
        EXPECT_NEAR(b.log(), want_b, 1e-12 * (1 + std::abs(want_b)));
        if (v == 1 && required == 0) {
          EXPECT_TRUE(a.rescaled);
        }
      }
    }
  }
  // Draws from sum a (required 5, forbidden 0x6) on node 0 and from the rescaled sum on node 1.
  for (int v : {0, 1}) {
    const int required = v == 0 ? 5 : 0;
    RevSum a{.required = required, .forbidden = 0x6, .slot = 2};
    RevSum b{.forbidden = 0x6, .slot = 3};
    rev.sum_two(v, a, b);
    const auto masks = table.parent_sets(v);
    const auto scores = table.log_scores(v);
    std::map<std::size_t, double> prob, uniform;
    const double log_total = direct_log_sum(table, v, required, 0x6);
    for (std::size_t k = 0; k < masks.size(); ++k)
      if (((masks[k] >> required) & 1U) && !(masks[k] & 0x6))
        prob[k] = std::exp(scores[k] - log_total);
    for (const auto& [k, p] : prob) uniform[k] = 1.0 / double(prob.size());
    constexpr int kDraws = 40000;
    Rng rng = make_stream(5, std::uint64_t(v));
    std::map<std::size_t, int> counts, wrong_counts;
    for (int d = 0; d < kDraws; ++d) {
      const std::size_t k = rev.draw(a, rng);
      ASSERT_TRUE(prob.count(k)) << "drew a set outside the sum";
      ++counts[k];
    }
    // The wrong variant: uniform among the allowed sets.
    std::vector<std::size_t> allowed;
    for (const auto& [k, p] : prob) allowed.push_back(k);
    for (int d = 0; d < kDraws; ++d) ++wrong_counts[allowed[uniform_below(rng, allowed.size())]];
    EXPECT_LT(chi_square_ratio(prob, counts, kDraws), 1.0) << "node " << v;
    EXPECT_GT(chi_square_ratio(prob, wrong_counts, kDraws), 1.0)
        << "uniform draws passed the check (node " << v << ")";
  }
}

TEST(StructureChainStationarity, LocalMovesN4) {
  const ScoreTable table = testing_util::random_full_table(4, 3, 11);
  const ExactPosterior exact = testing_util::exact_posterior(table, nullptr);
  ASSERT_EQ(exact.dags.size(), 543u);  // OEIS A003024
  const Comparison ok = run_and_compare(table, {}, exact, kSteps, 1);
  EXPECT_TRUE(passes(ok)) << describe(ok);
  FaultyConfig wrong;
  wrong.faults.drop_hastings = (1u << int(Move::kAdd)) | (1u << int(Move::kDelete));
  const Comparison bad = run_and_compare(table, wrong, exact, kSteps, 1);
  EXPECT_FALSE(passes(bad)) << "dropping the add/delete Hastings factors went unnoticed: "
                            << describe(bad);
}

// Local moves and REV, n = 4, in-degree <= 2.
TEST(StructureChainStationarity, RevN4) {
  const ScoreTable table = testing_util::random_full_table(4, 2, 12);
  const ExactPosterior exact = testing_util::exact_posterior(table, nullptr);
  ChainConfig config;
  config.rev_rate = 0.4;
  const Comparison ok = run_and_compare(table, config, exact, kSteps, 2);
  EXPECT_TRUE(passes(ok)) << describe(ok);
  FaultyConfig wrong{config};
  wrong.faults.drop_hastings = 1u << int(Move::kRev);
  const Comparison bad = run_and_compare(table, wrong, exact, kSteps, 2);
  EXPECT_FALSE(passes(bad)) << "dropping the REV Hastings ratio went unnoticed: " << describe(bad);
}

// Local moves and REV, n = 5, in-degree <= 3 (edges only: 29281 DAGs are too many for TV).
TEST(StructureChainStationarity, RevN5) {
  const ScoreTable table = testing_util::random_full_table(5, 3, 13);
  const ExactPosterior exact = testing_util::exact_posterior(table, nullptr);
  ChainConfig config;
  config.rev_rate = 0.2;
  const Comparison ok = run_and_compare(table, config, exact, kSteps, 3);
  EXPECT_TRUE(passes(ok)) << describe(ok);
  FaultyConfig wrong{config};
  wrong.faults.drop_hastings = 1u << int(Move::kRev);
  const Comparison bad = run_and_compare(table, wrong, exact, kSteps, 3);
  EXPECT_FALSE(passes(bad)) << describe(bad);
}

// Target restricted to D_1 (n = 4) and D_2 (n = 5), checked with the brute-force class.
TEST(StructureChainStationarity, RestrictedToCoverClass) {
  const BruteForceCoverClass d1(1);
  const ScoreTable t4 = testing_util::random_full_table(4, 3, 14);
  const ExactPosterior exact4 = testing_util::exact_posterior(t4, &d1);
  ChainConfig config;
  config.restriction = &d1;
  config.rev_rate = 0.2;
  const Comparison ok4 = run_and_compare(t4, config, exact4, kSteps, 4);
  EXPECT_TRUE(passes(ok4)) << describe(ok4);
  FaultyConfig wrong{config};
  wrong.faults.drop_hastings = (1u << int(Move::kAdd)) | (1u << int(Move::kDelete));
  const Comparison bad = run_and_compare(t4, wrong, exact4, kSteps, 4);
  EXPECT_FALSE(passes(bad)) << describe(bad);

  const BruteForceCoverClass d2(2);
  const ScoreTable t5 = testing_util::random_full_table(5, 2, 15);
  const ExactPosterior exact5 = testing_util::exact_posterior(t5, &d2);
  config.restriction = &d2;
  const Comparison ok5 = run_and_compare(t5, config, exact5, kSteps, 5);
  EXPECT_TRUE(passes(ok5)) << describe(ok5);
}

// Teleports from an exact D_2 sampler (by enumeration) mixed with local moves, n = 4 and 5.
TEST(StructureChainStationarity, TeleportsFromExactSampler) {
  const BruteForceCoverClass d2(2);
  const ScoreTable t4 = testing_util::random_full_table(4, 3, 16);
  const ExactPosterior exact4 = testing_util::exact_posterior(t4, nullptr);
  const EnumeratedTeleport source4(t4, d2);
  ChainConfig config;
  config.teleport = &source4;
  config.teleport_rate = 0.2;
  const Comparison ok = run_and_compare(t4, config, exact4, kSteps, 6);
  EXPECT_TRUE(passes(ok)) << describe(ok);
  EXPECT_GT(ok.regenerations, kSteps / 50);
  FaultyConfig wrong{config};
  wrong.faults.drop_hastings = 1u << int(Move::kTeleport);
  const Comparison bad = run_and_compare(t4, wrong, exact4, kSteps, 6);
  EXPECT_FALSE(passes(bad)) << describe(bad);

  const ScoreTable t5 = testing_util::random_full_table(5, 3, 17);
  const ExactPosterior exact5 = testing_util::exact_posterior(t5, nullptr);
  const EnumeratedTeleport source5(t5, d2);
  config.teleport = &source5;
  config.teleport_rate = 0.1;
  config.rev_rate = 0.1;
  const Comparison ok5 = run_and_compare(t5, config, exact5, kSteps, 7);
  EXPECT_TRUE(passes(ok5)) << describe(ok5);
}

// Exact block moves alone (m = 2, 3, 4 of n = 5; in-degree <= 3). Each step redraws the
// block's parent sets from their exact conditional (docs/mathematics.md, "Exact block moves").
// The broken twin ignores the paths through the nodes outside the block when deriving g: its
// draws may close cycles, which the check sees as wrong edge frequencies.
constexpr std::uint64_t kBlockSteps = 60'000;

TEST(StructureChainStationarity, BlockMovesAloneN5) {
  const ScoreTable table = testing_util::random_full_table(5, 3, 18);
  const ExactPosterior exact = testing_util::exact_posterior(table, nullptr);
  for (int m : {2, 3, 4}) {
    ChainConfig config;
    config.block_rate = 1.0;
    config.block_size = m;
    const Comparison ok = run_and_compare(table, config, exact, kBlockSteps, 20 + m);
    EXPECT_TRUE(passes(ok)) << "m = " << m << ": " << describe(ok);
  }
  FaultyConfig wrong;
  wrong.config.block_rate = 1.0;
  wrong.config.block_size = 3;
  wrong.faults.block = BlockFault::kIgnoreOutsidePaths;
  const Comparison bad = run_and_compare(table, wrong, exact, kBlockSteps, 23, nullptr, false);
  EXPECT_FALSE(passes(bad)) << "ignoring outside paths went unnoticed: " << describe(bad);
}

// Blocks of every node (the automatic choice for small tables) keep one engine for the whole run
// (block_move.hpp, holds_whole): mixed with local moves and REV, the states that the local moves
// leave must not matter to the cached weights. Against the exact posterior at n = 5.
TEST(StructureChainStationarity, WholeSetBlocksWithLocalMovesN5) {
  const ScoreTable table = testing_util::random_full_table(5, 3, 21);
  const ExactPosterior exact = testing_util::exact_posterior(table, nullptr);
  ChainConfig config;
  config.block_rate = 0.02;
  config.block_size = 5;
  config.rev_rate = 0.1;
  const Comparison ok = run_and_compare(table, config, exact, kSteps / 2, 26);
  EXPECT_TRUE(passes(ok)) << describe(ok);
}

// Block moves mixed with local moves and REV: n = 4 (edges and TV over all 543 DAGs, blocks
// from a fixed family mixed with uniform ones) and n = 5 (edges); each with its broken twin.
TEST(StructureChainStationarity, BlockMovesWithLocalMoves) {
  const ScoreTable t4 = testing_util::random_full_table(4, 3, 19);
  const ExactPosterior exact4 = testing_util::exact_posterior(t4, nullptr);
  ChainConfig config;
  config.block_rate = 0.1;
  config.block_size = 2;
  config.block_family = {{0, 1}, {2, 3}, {1, 3}};
  config.rev_rate = 0.1;
  const Comparison ok4 = run_and_compare(t4, config, exact4, kSteps / 2, 24);
  EXPECT_TRUE(passes(ok4)) << describe(ok4);

  const ScoreTable t5 = testing_util::random_full_table(5, 3, 20);
  const ExactPosterior exact5 = testing_util::exact_posterior(t5, nullptr);
  config.block_size = 3;
  config.block_family = {{0, 1, 2}, {2, 3, 4}};
  const Comparison ok5 = run_and_compare(t5, config, exact5, kSteps / 2, 25);
  EXPECT_TRUE(passes(ok5)) << describe(ok5);
  FaultyConfig wrong{config};
  wrong.faults.block = BlockFault::kIgnoreOutsidePaths;
  wrong.config.rev_rate = 0;  // its cycles would derail REV's descendant bookkeeping
  const Comparison bad = run_and_compare(t5, wrong, exact5, kSteps / 2, 25, nullptr, false);
  EXPECT_FALSE(passes(bad)) << describe(bad);
}

// Block moves inside a class (D_2, n = 5): accepted exactly when the result lies in it. With
// m = n every accepted block move is an exact draw of the restricted posterior: a regeneration.
TEST(StructureChainStationarity, BlockMovesRestrictedToCoverClass) {
  const BruteForceCoverClass d2(2);
  const ScoreTable table = testing_util::random_full_table(5, 3, 21);
  const ExactPosterior exact = testing_util::exact_posterior(table, &d2);
  ChainConfig config;
  config.restriction = &d2;
  config.block_rate = 0.2;
  config.block_size = 3;
  config.rev_rate = 0.1;
  const Comparison ok = run_and_compare(table, config, exact, kSteps / 2, 26);
  EXPECT_TRUE(passes(ok)) << describe(ok);
  config.block_size = 5;
  config.block_rate = 0.05;
  const Comparison whole = run_and_compare(table, config, exact, kSteps / 2, 27);
  EXPECT_TRUE(passes(whole)) << describe(whole);
  EXPECT_GT(whole.regenerations, kSteps / 2 / 100);
}

// Rejection skipping (docs/chains.md, "Rejection skipping"): the chain that draws the wait to
// the next event instead of stepping through rejections has the plain chain's law. Checked
// against enumeration: n = 4 with the TV distance over all 543 DAGs, n = 5 with the edges and
// 20 DAG bins of equal exact mass; the broken twin takes a uniform slot at each event and
// accepts it whenever it is valid (the bound ignored), and must fail the same checks.
constexpr int kDagBins = 20;

TEST(RejectionSkipping, LocalMovesMatchEnumeration) {
  const ScoreTable t4 = testing_util::random_full_table(4, 3, 31);
  const ExactPosterior exact4 = testing_util::exact_posterior(t4, nullptr);
  ChainConfig config;
  config.skip_rejections = true;
  const Comparison ok4 = run_and_compare(t4, config, exact4, kSteps, 31);
  EXPECT_TRUE(passes(ok4)) << describe(ok4);

  const ScoreTable t5 = testing_util::random_full_table(5, 3, 32);
  const ExactPosterior exact5 = testing_util::exact_posterior(t5, nullptr);
  const Comparison ok5 = run_and_compare(t5, config, exact5, kSteps, 32, nullptr, true, kDagBins);
  EXPECT_TRUE(passes(ok5)) << describe(ok5);
  FaultyConfig wrong{config};
  wrong.faults.skip_uniform_events = true;
  const Comparison bad4 = run_and_compare(t4, wrong, exact4, kSteps, 31);
  EXPECT_FALSE(passes(bad4)) << "uniform events went unnoticed at n = 4: " << describe(bad4);
  const Comparison bad5 = run_and_compare(t5, wrong, exact5, kSteps, 32, nullptr, true, kDagBins);
  EXPECT_FALSE(passes(bad5)) << "uniform events went unnoticed at n = 5: " << describe(bad5);
  // The bounds carry the Hastings factors: dropping them under skipping is caught too.
  FaultyConfig no_hastings{config};
  no_hastings.faults.drop_hastings = (1u << int(Move::kAdd)) | (1u << int(Move::kDelete));
  const Comparison bad_h = run_and_compare(t4, no_hastings, exact4, kSteps, 31);
  EXPECT_FALSE(passes(bad_h)) << describe(bad_h);
}

// Skipping with REV and exact block moves mixed in (their events drawn with probability
// p_other / e), inside a class (D_2: the bound ignores it, the event checks it), and with
// teleports from D_2; n = 5.
TEST(RejectionSkipping, WithRevAndBlocksN5) {
  const ScoreTable table = testing_util::random_full_table(5, 3, 33);
  const ExactPosterior exact = testing_util::exact_posterior(table, nullptr);
  ChainConfig config;
  config.skip_rejections = true;
  config.rev_rate = 0.1;
  config.block_rate = 0.05;
  config.block_size = 2;
  const Comparison ok = run_and_compare(table, config, exact, kSteps, 33, nullptr, true, kDagBins);
  EXPECT_TRUE(passes(ok)) << describe(ok);
  FaultyConfig wrong{config};
  wrong.faults.skip_uniform_events = true;
  const Comparison bad = run_and_compare(table, wrong, exact, kSteps, 33, nullptr, true, kDagBins);
  EXPECT_FALSE(passes(bad)) << describe(bad);

  const BruteForceCoverClass d2(2);
  const ExactPosterior restricted = testing_util::exact_posterior(table, &d2);
  config.restriction = &d2;
  config.block_rate = 0;
  const Comparison in_class =
      run_and_compare(table, config, restricted, kSteps, 34, nullptr, true, kDagBins);
  EXPECT_TRUE(passes(in_class)) << describe(in_class);

  const EnumeratedTeleport source(table, d2);  // teleports from D_2, unrestricted target
  config.restriction = nullptr;
  config.teleport = &source;
  config.teleport_rate = 0.05;
  const Comparison teleported =
      run_and_compare(table, config, exact, kSteps, 37, nullptr, true, kDagBins);
  EXPECT_TRUE(passes(teleported)) << describe(teleported);
  EXPECT_GT(teleported.regenerations, kSteps / 100);
}

// The wait to the next event is chain state: stepping one step at a time (step()) and skipping
// through budgets of any length (quiet_steps(), event_step()) give the same trajectory, so the
// runner's segment ends, set by the clock, do not change it.
TEST(RejectionSkipping, TrajectoryDoesNotDependOnBudgets) {
  const ScoreTable table = testing_util::random_full_table(8, 3, 35);
  ChainConfig config;
  config.skip_rejections = true;
  config.rev_rate = 0.05;
  StructureChain stepped(table, config), skipped(table, config);
  Rng rng_a = make_stream(35, 0), rng_b = make_stream(35, 0), budgets = make_stream(36, 0);
  constexpr std::uint64_t kTotal = 200'000;
  std::uint64_t done = 0;
  while (done < kTotal) {
    const std::uint64_t budget = std::min(kTotal - done, 1 + uniform_below(budgets, 5000));
    const std::uint64_t quiet = skipped.quiet_steps(rng_b, budget);
    if (quiet < budget) skipped.event_step(rng_b);
    const std::uint64_t advanced = std::min(budget, quiet + 1);
    for (std::uint64_t s = 0; s < advanced; ++s) stepped.step(rng_a);
    done += advanced;
    ASSERT_EQ(stepped.parents_words(), skipped.parents_words()) << "after " << done << " steps";
  }
  EXPECT_EQ(stepped.counts(), skipped.counts());
  EXPECT_GT(stepped.counts().accepted[int(Move::kAdd)], 100u);
  EXPECT_TRUE(skipped.check_invariants());
}

}  // namespace
}  // namespace covey
