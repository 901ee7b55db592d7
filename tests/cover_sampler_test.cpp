// The exact sampler on D_k (docs/mathematics.md section 4) against full enumeration of all DAGs
// (n = 4, 5; k = 1, 2, 3; fixed seeds): U, per-cover-set weights, the signed formula, the
// Z_k estimate, chi-square tests of the draws (and of a broken sampler, which must fail),
// Robinson's DAG counts (OEIS A003024), thread-count invariance and save/load.
#include <H5Cpp.h>
#include <gtest/gtest.h>
#include <tbb/global_control.h>

#include <bit>
#include <cmath>

#include "core/h5.hpp"
#include "cover_test_util.hpp"
#include "covey/core/error.hpp"
#include "covey/core/logmath.hpp"
#include "covey/exact/cover_draws.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "covey/graph/cover_class.hpp"

namespace covey {
namespace {

using cover_testing::Enumeration;

struct Case {
  std::string name;
  ScoreTable table;
};

std::vector<Case> cases(int n) {
  std::vector<Case> out;
  out.push_back({"full seed 1", testing_util::random_full_table(n, n - 1, 1)});
  out.push_back({"full seed 2", testing_util::random_full_table(n, n - 1, 2)});
  out.push_back({"in-degree 2, missing sets", cover_testing::restricted_table(n, 2, 3, 0.7)});
  out.push_back(
      {"required edge 0->1", cover_testing::restricted_table(n, n - 1, 4, 0.9, {{0, 1}})});
  return out;
}

// Exact values by enumeration: log Z_k and log sum_G m(G) w(G), per cover set too.
struct Exact {
  double log_zk = -INFINITY, log_u = -INFINITY;
  std::map<std::uint64_t, double> log_cover;  // log of the weight of DAGs having C as a split
  std::map<std::pair<std::uint64_t, std::uint64_t>, double> log_split;  // per (C, L)
};

std::uint64_t mask_of(const VertexList& list) {
  std::uint64_t m = 0;
  for (int v : list) m |= std::uint64_t{1} << v;
  return m;
}

VertexList list_of(std::uint64_t mask) {
  VertexList out;
  for (; mask; mask &= mask - 1) out.push_back(std::countr_zero(mask));
  return out;
}

Exact exact_values(const Enumeration& e, int k) {
  Exact x;
  LogSumAccumulator zk, u;
  std::map<std::uint64_t, LogSumAccumulator> per_cover;
  std::map<std::pair<std::uint64_t, std::uint64_t>, LogSumAccumulator> per_split;
  for (std::size_t i = 0; i < e.dags.size(); ++i) {
    const auto sp = splits(e.dags[i], k);
    if (sp.empty()) continue;
    zk.add(e.log_weights[i]);
    for (const VertexList& list : sp) {
      const std::uint64_t c = mask_of(list);
      u.add(e.log_weights[i]);
      per_cover[c].add(e.log_weights[i]);
      per_split[{c, e.dags[i].non_sinks() & ~c}].add(e.log_weights[i]);
    }
  }
  x.log_zk = zk.value();
  x.log_u = u.value();
  for (auto& [c, acc] : per_cover) x.log_cover[c] = acc.value();
  for (auto& [s, acc] : per_split) x.log_split[s] = acc.value();
  return x;
}

TEST(CoverSampler, UpperBoundAndCoverWeightsMatchEnumeration) {
  for (int n : {4, 5})
    for (auto& c : cases(n)) {
      const Enumeration e = cover_testing::enumerate_all(c.table);
      for (int k = 1; k <= 3; ++k) {
        SCOPED_TRACE(c.name + " n=" + std::to_string(n) + " k=" + std::to_string(k));
        const Exact x = exact_values(e, k);
        const CoverSampler s = CoverSampler::build(c.table, k);
        // U = sum over G of m(G) w(G), to 1e-9 relative.
        EXPECT_NEAR(s.log_upper_bound(), x.log_u, 1e-9);
        for (std::uint64_t cover = 0; cover < (1U << n); ++cover) {
          if (std::popcount(cover) > k) continue;
          const auto it = x.log_cover.find(cover);
          const double want = it == x.log_cover.end() ? -INFINITY : it->second;
          const double got = s.log_cover_weight(list_of(cover));
          if (want == -INFINITY)
            EXPECT_EQ(got, -INFINITY) << "cover " << cover;
          else
            EXPECT_NEAR(got, want, 1e-9) << "cover " << cover;
        }
        // Z_k <= U <= 2^k Z_k, so the acceptance rate Z_k / U is >= 2^-k.
        EXPECT_LE(x.log_zk, x.log_u + 1e-12);
        EXPECT_GE(x.log_zk - x.log_u, -k * std::log(2.0) - 1e-12);
        EXPECT_EQ(s.clamped_splits(), 0u);
        EXPECT_EQ(double(s.num_splits()), count_candidate_splits(n, k));
      }
    }
}

TEST(CoverSampler, SignedSplitFormulaMatchesEnumerationAndPositiveEngine) {
  // the signed inclusion-exclusion of docs/mathematics.md section 4 for each split (C, L), against
  // enumeration and summed over L against the positive engine's cover-set weight.
  for (auto& c : cases(5)) {
    const Enumeration e = cover_testing::enumerate_all(c.table);
    for (int k = 1; k <= 2; ++k) {
      SCOPED_TRACE(c.name + " k=" + std::to_string(k));
      const Exact x = exact_values(e, k);
      const CoverSampler s = CoverSampler::build(c.table, k);
      for (std::uint64_t cover = 0; cover < 32; ++cover) {
        if (std::popcount(cover) > k) continue;
        LogSumAccumulator sum;
        const std::uint64_t outside = 31 & ~cover;
        for (std::uint64_t links = outside;; links = (links - 1) & outside) {
          if (std::popcount(links) <= std::popcount(cover)) {
            bool clamped = false;
            const double w = signed_split_log_weight(c.table, cover, links, &clamped);
            const auto it = x.log_split.find({cover, links});
            if (it == x.log_split.end()) {
              // Zero in exact arithmetic: rounding may leave a tiny residue of either sign.
              EXPECT_TRUE(w == -INFINITY || w < s.log_upper_bound() - 25);
            } else {
              EXPECT_NEAR(w, it->second, 1e-8);
              EXPECT_FALSE(clamped);
              sum.add(w);
            }
          }
          if (links == 0) break;
        }
        const double engine = s.log_cover_weight(list_of(cover));
        if (engine == -INFINITY)
          EXPECT_EQ(sum.value(), -INFINITY);
        else
          EXPECT_NEAR(sum.value(), engine, 1e-8);
      }
    }
  }
}

struct DrawCounts {
  std::vector<std::uint64_t> counts;
  std::uint64_t trials = 0, outside_class = 0;
};

template <class DrawOne>
DrawCounts count_draws(const Enumeration& e, std::size_t draws, DrawOne draw_one) {
  DrawCounts dc;
  dc.counts.assign(e.dags.size(), 0);
  for (std::size_t i = 0; i < draws; ++i) {
    const Dag d = draw_one(dc.trials);
    const auto it = e.index.find(d.words());
    if (it == e.index.end()) {
      ++dc.outside_class;
      continue;
    }
    ++dc.counts[it->second];
  }
  return dc;
}

TEST(CoverSampler, DrawsPassChiSquareAgainstEnumerationAndBrokenSamplerFails) {
  for (int n : {4, 5})
    for (int k = 1; k <= 3; ++k) {
      auto all = cases(n);
      const ScoreTable& table = all[(n + k) % all.size()].table;
      SCOPED_TRACE(all[(n + k) % all.size()].name + " n=" + std::to_string(n) +
                   " k=" + std::to_string(k));
      const Enumeration e = cover_testing::enumerate_all(table);
      const Exact x = exact_values(e, k);
      // Exact D_k probabilities, and the proposal's m(G) w(G) / U.
      std::vector<double> target(e.dags.size(), 0.0), proposal(e.dags.size(), 0.0);
      for (std::size_t i = 0; i < e.dags.size(); ++i) {
        const auto m = splits(e.dags[i], k).size();
        if (m == 0) continue;
        target[i] = std::exp(e.log_weights[i] - x.log_zk);
        proposal[i] = double(m) * std::exp(e.log_weights[i] - x.log_u);
      }
      const CoverSampler s = CoverSampler::build(table, k);
      const std::size_t draws = n == 4 ? 30000 : 60000;
      Rng rng = make_stream(1000 + n * 10 + k, 0);
      const DrawCounts good =
          count_draws(e, draws, [&](std::uint64_t& trials) { return s.draw(rng, &trials); });
      EXPECT_EQ(good.outside_class, 0u);
      int df = 0;
      const double p = cover_testing::chi_square_p_value(target, good.counts, draws, &df);
      EXPECT_GT(p, 1e-4) << "df=" << df;
      // The Z_k estimate's 95% interval covers the enumerated value (fixed seed).
      const auto est = estimate_log_total_weight(s.log_upper_bound(), draws, good.trials);
      EXPECT_LE(est.log_lo, x.log_zk);
      EXPECT_GE(est.log_hi, x.log_zk);
      EXPECT_GE(double(draws) / double(good.trials), std::pow(2.0, -k));

      // Broken variant: accept every trial. Its draws follow m(G) w(G) / U instead, which the
      // same test must reject; against that proposal law they must pass. For k = 1 every DAG
      // has exactly one split (enumeration: U = Z_1), so the two laws agree and only k >= 2
      // can tell them apart.
      if (k == 1) {
        EXPECT_NEAR(x.log_u, x.log_zk, 1e-12);
        continue;
      }
      Rng rng2 = make_stream(2000 + n * 10 + k, 0);
      const DrawCounts broken =
          count_draws(e, draws, [&](std::uint64_t&) { return s.draw_proposal(rng2); });
      EXPECT_EQ(broken.outside_class, 0u);
      EXPECT_LT(cover_testing::chi_square_p_value(target, broken.counts, draws), 1e-6);
      EXPECT_GT(cover_testing::chi_square_p_value(proposal, broken.counts, draws), 1e-4);
    }
}

TEST(CoverSampler, UnitWeightsEstimateRobinsonCounts) {
  // With all weights 1 and k = n - 1, D_k holds every DAG: Z_k is the number of labelled DAGs,
  // 543 for n = 4 and 29281 for n = 5 (Robinson 1973; OEIS A003024).
  for (auto [n, count] : {std::pair<int, double>{4, 543}, {5, 29281}}) {
    const CoverSampler s = CoverSampler::build(testing_util::unit_table(n, n - 1), n - 1);
    const CoverDrawBatch b = draw_cover_batch(s, 7, 20000, false);
    const auto est = estimate_log_total_weight(s.log_upper_bound(), 20000, b.trials);
    EXPECT_LE(est.log_lo, std::log(count)) << "n=" << n;
    EXPECT_GE(est.log_hi, std::log(count)) << "n=" << n;
    EXPECT_LT(est.log_hi - est.log_lo, 0.05);
  }
}

TEST(CoverSampler, ResultsDoNotDependOnThreadCount) {
  const ScoreTable table = testing_util::random_full_table(9, 3, 21);
  auto build_and_draw = [&](int threads) {
    tbb::global_control c(tbb::global_control::max_allowed_parallelism, threads);
    CoverSampler s = CoverSampler::build(table, 3);
    CoverDrawBatch b = draw_cover_batch(s, 5, 3000, false);
    Rng rng = make_stream(9, 1);
    std::vector<Dag> seq;
    for (int i = 0; i < 200; ++i) seq.push_back(s.draw(rng));
    return std::make_tuple(s.log_upper_bound(), b.dags, b.trials, seq);
  };
  const auto one = build_and_draw(1);
  const auto two = build_and_draw(2);
  EXPECT_EQ(std::get<0>(one), std::get<0>(two));
  EXPECT_EQ(std::get<1>(one), std::get<1>(two));
  EXPECT_EQ(std::get<2>(one), std::get<2>(two));
  EXPECT_EQ(std::get<3>(one), std::get<3>(two));
}

TEST(CoverSampler, SaveLoadGivesIdenticalDraws) {
  testing_util::TempDir dir;
  const ScoreTable table = cover_testing::restricted_table(8, 3, 31, 0.8);
  const CoverSampler s = CoverSampler::build(table, 2);
  s.save(dir.file("s.h5"));
  const CoverSampler t = CoverSampler::load(dir.file("s.h5"), table);
  EXPECT_EQ(t.log_upper_bound(), s.log_upper_bound());
  EXPECT_EQ(t.cover_bound(), 2);
  EXPECT_EQ(t.num_units(), s.num_units());
  Rng a = make_stream(3, 0), b = make_stream(3, 0);
  std::uint64_t ta = 0, tb = 0;
  for (int i = 0; i < 500; ++i) ASSERT_EQ(s.draw(a, &ta), t.draw(b, &tb));
  EXPECT_EQ(ta, tb);
  // A different table is refused.
  const ScoreTable other = cover_testing::restricted_table(8, 3, 32, 0.8);
  EXPECT_THROW(CoverSampler::load(dir.file("s.h5"), other), InputError);
  EXPECT_THROW(CoverSampler::load(dir.file("missing.h5"), table), InputError);
}

// Regression (found by fuzz_sampler_h5, input in tests/fuzz/regressions/sampler_h5/): a sampler
// file whose table cells were rewritten through the HDF5 API (so every chunk checksum is valid)
// loaded, and its draws then reached a state of weight 0 and threw std::logic_error. The tables
// digest now refuses such a file with an InputError naming it.
TEST(CoverSampler, LoadRefusesTablesChangedAfterSaving) {
  testing_util::TempDir dir;
  const ScoreTable table = cover_testing::restricted_table(6, 2, 33, 0.8);
  CoverSampler::build(table, 2).save(dir.file("s.h5"));
  EXPECT_NO_THROW(CoverSampler::load(dir.file("s.h5"), table));
  {
    H5::H5File file(dir.file("s.h5"), H5F_ACC_RDWR);
    H5::DataSet ds = file.openDataSet("/tables/values");
    std::vector<double> m(ds.getSpace().getSimpleExtentNpoints());
    ds.read(m.data(), H5::PredType::NATIVE_DOUBLE);
    for (auto& x : m) x = 0;  // every cell of weight 0
    ds.write(m.data(), H5::PredType::NATIVE_DOUBLE);
  }
  try {
    CoverSampler::load(dir.file("s.h5"), table);
    ADD_FAILURE() << "an edited sampler file was accepted";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("s.h5"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("digest"), std::string::npos) << e.what();
  }
}

// Sampler files of format 1 (long double tables as mantissa and exponent datasets) are refused
// with a message that says what to do, and so are files of a newer format.
TEST(CoverSampler, LoadRefusesOtherFormatVersions) {
  testing_util::TempDir dir;
  const ScoreTable table = cover_testing::restricted_table(6, 2, 33, 0.8);
  CoverSampler::build(table, 1).save(dir.file("s.h5"));
  const auto load_message = [&](long long version) -> std::string {
    {
      H5::H5File file(dir.file("s.h5"), H5F_ACC_RDWR);
      file.removeAttr("format_version");
      h5::set_attr(file, "format_version", version);
    }
    try {
      CoverSampler::load(dir.file("s.h5"), table);
    } catch (const InputError& e) {
      return e.what();
    }
    return "loaded";
  };
  for (long long version : {1, 2}) {  // long double tables; 64-bit cover masks
    const std::string old = load_message(version);
    EXPECT_NE(old.find("s.h5: sampler format " + std::to_string(version) + " of an older covey"),
              std::string::npos)
        << old;
    EXPECT_NE(old.find("--save-sampler"), std::string::npos) << old;
  }
  EXPECT_NE(load_message(4).find("newer covey"), std::string::npos);
  EXPECT_EQ(load_message(3), "loaded");
}

TEST(CoverSampler, RejectsBadInputAndChecksMemoryFirst) {
  const ScoreTable table = testing_util::random_full_table(5, 4, 1);
  EXPECT_THROW(CoverSampler::build(table, -1), InputError);
  EXPECT_THROW(CoverSampler::build(table, 5), InputError);
  const ScoreTable forced = cover_testing::restricted_table(4, 3, 2, 1.0, {{0, 1}, {2, 3}});
  EXPECT_THROW(CoverSampler::build(forced, 1), InputError);
  CoverSamplerOptions tiny;
  tiny.memory_limit_bytes = 1000;
  try {
    CoverSampler::build(table, 3, tiny);
    ADD_FAILURE() << "expected a ResourceError";
  } catch (const ResourceError& e) {
    // The library names its fields; the CLI spells them as flags (cli::option_flag).
    EXPECT_NE(e.message_template().find("a smaller {k} shrinks them"), std::string::npos)
        << e.what();
    EXPECT_NE(std::string(e.what()).find("memory limit of 1000 B"), std::string::npos) << e.what();
  }
  EXPECT_GT(CoverSampler::estimate_memory_bytes(5, 3), 1000.0);
}

}  // namespace
}  // namespace covey
