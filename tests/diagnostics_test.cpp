// Convergence diagnostics: R-hat, bulk/tail ESS, MCSE and mean against R's posterior package
// (version 1.4.0, Debian r-cran-posterior) on the same draws, plus the regenerative standard
// error, the draws CSV reader and `covey check --draws`.
#include <gtest/gtest.h>
#include <tbb/global_control.h>

#include <boost/random/normal_distribution.hpp>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <limits>
#include <map>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "covey/core/error.hpp"
#include "covey/core/random.hpp"
#include "covey/diagnostics/diagnostics.hpp"
#include "covey/diagnostics/draws_csv.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::run_covey;
using testing_util::run_shell;
using testing_util::TempDir;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();

// --- Draws generated with fixed seeds -------------------------------------------------------

struct Quantity {
  std::string name;
  Draws draws;
};

// Stationary AR(1): x_t = phi x_{t-1} + e_t, e_t ~ N(0, 1), started from N(0, 1 / (1 - phi^2)).
std::vector<double> ar1(Rng& rng, double phi, int n) {
  boost::random::normal_distribution<double> normal(0.0, 1.0);
  std::vector<double> x(n);
  double prev = normal(rng) / std::sqrt(1 - phi * phi);
  for (int t = 0; t < n; ++t) x[t] = prev = phi * prev + normal(rng);
  return x;
}

// Sticky 0/1 Markov chain: leaves 0 with probability p01 and 1 with probability p10 per step.
std::vector<double> sticky_binary(Rng& rng, double p01, double p10, int n) {
  std::vector<double> x(n);
  int state = uniform01(rng) < p01 / (p01 + p10);
  for (int t = 0; t < n; ++t) {
    if (uniform01(rng) < (state ? p10 : p01)) state = 1 - state;
    x[t] = state;
  }
  return x;
}

// Chains drawn by `chain(c)`, one after another (chain-major).
template <class Generate>
Draws make_draws(int chains, int iterations, Generate chain) {
  Draws d{{}, chains, iterations};
  for (int c = 0; c < chains; ++c) {
    const std::vector<double> x = chain(c);
    d.values.insert(d.values.end(), x.begin(), x.end());
  }
  return d;
}

Draws transform(Draws d, double (*f)(double)) {
  for (double& v : d.values) v = f(v);
  return d;
}

void write_draws_csv(const std::string& path, const std::vector<Quantity>& quantities) {
  std::ofstream out(path);
  out << "chain,iteration";
  for (const Quantity& q : quantities) out << ',' << q.name;
  out << '\n';
  const DrawsView first = quantities[0].draws.view();
  char buffer[40];
  for (int c = 0; c < first.chains; ++c)
    for (int t = 0; t < first.iterations; ++t) {
      out << c + 1 << ',' << t + 1;
      for (const Quantity& q : quantities) {
        std::snprintf(buffer, sizeof buffer, "%.17g", q.draws.view().chain(c)[t]);
        out << ',' << buffer;
      }
      out << '\n';
    }
}

// The test scenarios, each one CSV file: name -> quantities.
std::map<std::string, std::vector<Quantity>> scenarios() {
  std::map<std::string, std::vector<Quantity>> s;
  {  // (a) AR(1) chains, phi = 0.9, with transformed and tied versions
    Rng rng = make_stream(2021, 1);
    const Draws phi9 = make_draws(4, 1000, [&](int) { return ar1(rng, 0.9, 1000); });
    const Draws phi5 = make_draws(4, 1000, [&](int) { return ar1(rng, 0.5, 1000); });
    s["ar1"] = {{"ar_0.9", phi9},
                {"ar_0.5", phi5},
                {"exp_ar", transform(phi9, [](double v) { return std::exp(v / 2); })},
                {"rounded", transform(phi9, [](double v) { return std::round(2 * v) / 2; })}};
  }
  {  // odd chain length (the middle draw is dropped when splitting); negative correlation,
     // where posterior caps the ESS at S log10 S
    Rng rng = make_stream(2021, 2);
    s["ar1_odd"] = {{"ar_0.9", make_draws(3, 1001, [&](int) { return ar1(rng, 0.9, 1001); })},
                    {"ar_neg", make_draws(3, 1001, [&](int) { return ar1(rng, -0.7, 1001); })},
                    {"iid", make_draws(3, 1001, [&](int) { return ar1(rng, 0.0, 1001); })}};
  }
  {  // (b) binary indicator chains with long runs
    Rng rng = make_stream(2021, 3);
    const Draws sticky =
        make_draws(4, 1000, [&](int) { return sticky_binary(rng, 0.02, 0.02, 1000); });
    const Draws rare =
        make_draws(4, 1000, [&](int) { return sticky_binary(rng, 0.001, 0.05, 1000); });
    std::vector<double> c1 = sticky_binary(rng, 0.01, 0.01, 1000);
    std::vector<double> c3 = sticky_binary(rng, 0.01, 0.01, 1000);
    const auto flipped = [](std::vector<double> x) {
      for (double& v : x) v = 1 - v;
      return x;
    };
    const std::vector<std::vector<double>> halves = {c1, flipped(c1), c3, flipped(c3)};
    Draws half = make_draws(4, 1000, [&](int c) { return halves[c]; });
    Draws one_stuck = make_draws(4, 1000, [&](int c) {
      return c == 3 ? std::vector<double>(1000, 0.0) : sticky_binary(rng, 0.02, 0.03, 1000);
    });
    s["binary"] = {{"sticky", sticky},
                   {"rare", rare},
                   {"two_valued", transform(sticky, [](double v) { return 2 + 5 * v; })},
                   {"half", half},
                   {"one_chain_stuck", one_stuck}};
  }
  {  // (c) chains of unequal means
    Rng rng = make_stream(2021, 4);
    const double offsets[] = {0, 0, 0, 1.5};
    Draws shifted = make_draws(4, 1000, [&](int c) {
      std::vector<double> x = ar1(rng, 0.5, 1000);
      for (double& v : x) v += offsets[c];
      return x;
    });
    s["shift"] = {{"shifted", shifted}};
  }
  {  // chains each constant at a different value
    s["stuck"] = {{"stuck_apart",
                   make_draws(4, 1000, [](int c) { return std::vector<double>(1000, c + 1.0); })}};
  }
  {  // (d) constant draws
    s["constant"] = {
        {"constant", make_draws(4, 50, [](int) { return std::vector<double>(50, 3.5); })}};
  }
  return s;
}

// --- posterior's values -----------------------------------------------------------------------

double parse_r_number(const std::string& text) {
  if (text == "NA" || text == "NaN") return kNaN;
  if (text == "Inf") return kInf;
  if (text == "-Inf") return -kInf;
  return std::stod(text);
}

std::string r_command(const std::string& mode, const std::string& out,
                      const std::vector<std::string>& inputs) {
  std::string cmd = std::string(COVEY_RSCRIPT) + " " + COVEY_SOURCE_DIR +
                    "/tests/reference/posterior_reference.R " + mode + " " + out;
  for (const std::string& in : inputs) cmd += " " + in;
  return cmd;
}

// The scenarios' draws and CSV files, made once per test process.
struct Scenarios {
  TempDir dir;
  std::map<std::string, std::vector<Quantity>> draws = scenarios();
  Scenarios() {
    for (const auto& [name, quantities] : draws) write_draws_csv(csv(name), quantities);
  }
  std::string csv(const std::string& name) const { return dir.file(name + ".csv"); }
};

const Scenarios& scenario_files() {
  static const Scenarios s;  // destroyed at exit, removing its folder
  return s;
}

const std::vector<Quantity>& scenario(const std::string& name) {
  return scenario_files().draws.at(name);
}

// posterior's summaries of one scenario file (R runs once per file and test process).
struct PosteriorRun {
  std::string version;                          // "# posterior <version>"
  std::map<std::string, FeatureSummary> value;  // quantity name -> posterior's values
};

const PosteriorRun& posterior_run(const std::string& file) {
  static std::map<std::string, PosteriorRun> runs;
  if (const auto it = runs.find(file); it != runs.end()) return it->second;
  PosteriorRun r;
  TempDir dir;
  const std::string out = dir.file("posterior.csv");
  const auto run = run_shell(r_command("summary", out, {scenario_files().csv(file)}));
  if (run.exit_code != 0) throw std::runtime_error("Rscript failed: " + run.err);
  std::ifstream in(out);
  std::string line;
  std::getline(in, r.version);
  std::getline(in, line);  // column names
  while (std::getline(in, line)) {
    std::vector<std::string> f;
    std::stringstream ss(line);
    for (std::string cell; std::getline(ss, cell, ',');) f.push_back(cell);
    if (f.size() != 8) throw std::runtime_error("bad line from R: " + line);
    r.value[f[1]] = {parse_r_number(f[2]), parse_r_number(f[3]), parse_r_number(f[4]),
                     parse_r_number(f[5]), parse_r_number(f[6]), parse_r_number(f[7])};
  }
  return runs[file] = r;
}

const FeatureSummary& posterior_value(const std::string& file, const std::string& name) {
  const auto& values = posterior_run(file).value;
  const auto it = values.find(name);
  if (it == values.end()) throw std::runtime_error("no posterior value for " + file + "/" + name);
  return it->second;
}

// Equal to posterior's value to 1e-6 relative; NA must be NaN and Inf infinite.
void expect_matches(double ours, double theirs, const std::string& what) {
  if (std::isnan(theirs)) {
    EXPECT_TRUE(std::isnan(ours)) << what << ": posterior gives NA, covey " << ours;
  } else if (std::isinf(theirs)) {
    EXPECT_EQ(ours, theirs) << what;
  } else {
    EXPECT_NEAR(ours, theirs, 1e-6 * std::abs(theirs)) << what << " (posterior " << theirs << ")";
  }
}

void expect_summary_matches(const FeatureSummary& ours, const FeatureSummary& theirs,
                            const std::string& what) {
  expect_matches(ours.mean, theirs.mean, what + " mean");
  expect_matches(ours.rhat, theirs.rhat, what + " rhat");
  expect_matches(ours.ess_bulk, theirs.ess_bulk, what + " ess_bulk");
  expect_matches(ours.ess_tail, theirs.ess_tail, what + " ess_tail");
  expect_matches(ours.ess_mean, theirs.ess_mean, what + " ess_mean");
  expect_matches(ours.mcse, theirs.mcse, what + " mcse_mean");
}

// The single functions, each on its own (the general path for every feature).
FeatureSummary single_functions(DrawsView d) {
  return {mean(d), rhat(d), ess_bulk(d), ess_tail(d), ess_mean(d), mcse_mean(d)};
}

// Checks summarize() and the single functions against posterior for every quantity of a file.
// The source of every reference value: R's posterior package, version 1.4.0.
void check_scenario(const std::string& file) {
  EXPECT_EQ(posterior_run(file).version, "# posterior 1.4.0");
  for (const Quantity& q : scenario(file)) {
    const std::string what = file + "/" + q.name;
    const FeatureSummary& theirs = posterior_value(file, q.name);
    expect_summary_matches(summarize(q.draws.view()), theirs, what + " summarize");
    expect_summary_matches(single_functions(q.draws.view()), theirs, what + " single");
  }
}

TEST(DiagnosticsVsPosterior, Ar1Chains) {
  check_scenario("ar1");
  // Sanity of the reference itself: phi = 0.9 mixes slowly (ESS far below the 4000 draws).
  EXPECT_LT(posterior_value("ar1", "ar_0.9").ess_bulk, 1000);
  EXPECT_GT(posterior_value("ar1", "ar_0.5").ess_bulk, 1000);
}

TEST(DiagnosticsVsPosterior, OddLengthAndCappedEss) {
  check_scenario("ar1_odd");
  // Antithetic chains: posterior caps the ESS at S log10(S) for S = 6 x 500 split draws.
  const double s = 6 * 500;
  EXPECT_NEAR(posterior_value("ar1_odd", "ar_neg").ess_mean, s * std::log10(s), 1e-6 * s);
}

TEST(DiagnosticsVsPosterior, BinaryChainsWithLongRuns) {
  check_scenario("binary");
  // posterior's NA cases for 0/1 draws: the 95% quantile is 1, so that indicator is constant
  // and the tail ESS is NA; with exactly half ones the folded draws are constant and R-hat NA.
  EXPECT_TRUE(std::isnan(posterior_value("binary", "sticky").ess_tail));
  EXPECT_FALSE(std::isnan(posterior_value("binary", "rare").ess_tail));
  EXPECT_TRUE(std::isnan(posterior_value("binary", "half").rhat));
  EXPECT_FALSE(std::isnan(posterior_value("binary", "half").ess_bulk));
}

TEST(DiagnosticsVsPosterior, UnequalMeansGiveLargeRhat) {
  check_scenario("shift");
  const FeatureSummary& shifted = posterior_value("shift", "shifted");
  EXPECT_GT(shifted.rhat, 1.1);  // the test discriminates: far above the 1.01 threshold
  EXPECT_EQ(assess(summarize(scenario("shift")[0].draws.view()), Thresholds{}),
            FeatureStatus::kFail);
}

TEST(DiagnosticsVsPosterior, ConstantDrawsAreUndefined) {
  check_scenario("constant");
  const FeatureSummary s = summarize(scenario("constant")[0].draws.view());
  EXPECT_EQ(s.mean, 3.5);
  EXPECT_TRUE(std::isnan(s.rhat) && std::isnan(s.ess_bulk) && std::isnan(s.ess_tail) &&
              std::isnan(s.mcse));
  EXPECT_EQ(assess(s, Thresholds{}), FeatureStatus::kUndefined);
}

TEST(DiagnosticsVsPosterior, RankNormalizationWithTies) {
  Rng rng = make_stream(2021, 5);
  boost::random::normal_distribution<double> normal(0.0, 1.0);
  std::vector<double> values(301);
  for (double& v : values) v = std::round(normal(rng) * 3) / 2;  // many ties
  TempDir dir;
  {
    std::ofstream in(dir.file("values.csv"));
    in << "value\n";
    for (double v : values) in << v << '\n';
  }
  const auto run = run_shell(r_command("zscale", dir.file("z.csv"), {dir.file("values.csv")}));
  ASSERT_EQ(run.exit_code, 0) << run.err;
  std::ifstream out(dir.file("z.csv"));
  std::string line;
  std::getline(out, line);
  std::getline(out, line);
  const std::vector<double> ours = rank_normalize(values);
  for (std::size_t i = 0; i < values.size(); ++i) {
    ASSERT_TRUE(std::getline(out, line));
    EXPECT_NEAR(ours[i], std::stod(line), 1e-9) << "posterior z_scale, value " << i;
  }
}

// --- Library behaviour without R ---------------------------------------------------------------

TEST(DiagnosticsVsPosterior, StuckChainsHaveInfiniteRhat) {
  // Within-chain variance exactly zero: R-hat is infinite. posterior reports a huge finite
  // value instead (its chain variances are rounding residue); both are far above any
  // threshold. The other values agree as usual.
  const Draws& apart = scenario("stuck")[0].draws;
  FeatureSummary ours = summarize(apart.view());
  FeatureSummary theirs = posterior_value("stuck", "stuck_apart");
  EXPECT_EQ(ours.rhat, kInf);
  EXPECT_EQ(rhat(apart.view()), kInf);
  EXPECT_GT(theirs.rhat, 1e10);
  EXPECT_EQ(assess(ours, Thresholds{}), FeatureStatus::kFail);
  ours.rhat = theirs.rhat = 0;
  expect_summary_matches(ours, theirs, "stuck/stuck_apart");
}

TEST(Diagnostics, ShapeRequirements) {
  EXPECT_THROW(check_draws_shape(0, 100), InputError);
  EXPECT_THROW(check_draws_shape(4, kMinDrawsPerChain - 1), InputError);
  EXPECT_NO_THROW(check_draws_shape(1, kMinDrawsPerChain));
  const Draws short_chains{std::vector<double>(8, 1.0), 2, 4};
  EXPECT_THROW(summarize(short_chains.view()), InputError);
  try {
    check_draws_shape(2, 3, "f.csv");
    FAIL();
  } catch (const InputError& e) {
    EXPECT_EQ(std::string(e.what()).rfind("f.csv: 3 draws per chain", 0), 0u) << e.what();
  }
}

TEST(Diagnostics, SplitChainsDropsTheOddMiddleDraw) {
  const Draws d{{1, 2, 3, 4, 5, 11, 12, 13, 14, 15}, 2, 5};
  const Draws s = split_chains(d.view());
  EXPECT_EQ(s.chains, 4);
  EXPECT_EQ(s.iterations, 2);
  EXPECT_EQ(s.values, (std::vector<double>{1, 2, 11, 12, 4, 5, 14, 15}));
}

TEST(Diagnostics, ParallelSummariesDoNotDependOnThreadCount) {
  std::vector<Draws> features;
  for (const auto& [file, quantities] : scenario_files().draws)
    for (const Quantity& q : quantities)
      if (q.draws.chains == 4 && q.draws.iterations == 1000) features.push_back(q.draws);
  const FeatureSource source = [&](std::size_t i, std::span<double> out) {
    std::copy(features[i].values.begin(), features[i].values.end(), out.begin());
  };
  std::vector<std::vector<FeatureSummary>> runs;
  for (int threads : {1, 2, 3}) {
    tbb::global_control limit(tbb::global_control::max_allowed_parallelism, threads);
    std::size_t last_progress = 0;
    runs.push_back(summarize_features(features.size(), 4, 1000, source,
                                      [&](std::size_t done) { last_progress = done; }));
    EXPECT_EQ(last_progress, features.size());
  }
  for (std::size_t i = 0; i < features.size(); ++i) {
    const FeatureSummary one = summarize(features[i].view());
    for (const auto& run : runs)
      EXPECT_EQ(std::memcmp(&run[i], &one, sizeof one), 0) << "feature " << i;
  }
}

// summarize() takes the ESS of a 0/1 feature from exact lag sums over its runs of ones when the
// chains switch rarely, and from the FFT otherwise; the general functions always use the FFT.
// Both must agree to rounding, from chains that switch every 1000 steps to every other step.
TEST(Diagnostics, EssFromRunsOfOnesEqualsTheFftPath) {
  Rng rng = make_stream(2026, 12);
  for (const double p : {0.0005, 0.003, 0.02, 0.2, 0.6}) {
    const Draws d = make_draws(4, 20001, [&](int) { return sticky_binary(rng, p, p, 20001); });
    const FeatureSummary s = summarize(d.view());
    EXPECT_NEAR(s.ess_bulk, ess_bulk(d.view()), 1e-9 * ess_bulk(d.view())) << "switch rate " << p;
    EXPECT_NEAR(s.ess_mean, ess_mean(d.view()), 1e-9 * ess_mean(d.view())) << "switch rate " << p;
  }
}

TEST(Diagnostics, WorstFirstAndVerdict) {
  const Thresholds t;  // R-hat < 1.01, ESS > 400
  const std::vector<FeatureSummary> s = {
      {0.5, 1.001, 5000, 4000, 5000, 0.01},    // 0 pass
      {0.5, 1.05, 3000, 3000, 3000, 0.01},     // 1 fail by R-hat
      {0.5, kNaN, kNaN, kNaN, kNaN, kNaN},     // 2 undefined (constant)
      {0.5, 1.002, 300, kNaN, 300, 0.01},      // 3 fail by bulk ESS
      {0.5, 1.003, 900, kNaN, 900, 0.01},      // 4 pass: tail undefined is not checked
      {0.5, kInf, 10, 10, 10, 0.01},           // 5 fail: stuck chains
      {0.5, 1.001, 5000, 350, 5000, 0.01},     // 6 fail by tail ESS
      {0.5, 1.00004, 5000, 4500, 5000, 0.01},  // 7 pass; prints as 1.0000, like 8
      {0.5, 1.00001, 800, 800, 800, 0.01},     // 8 pass; lower ESS, so shown before 7
  };
  EXPECT_EQ(assess(s[4], t), FeatureStatus::kPass);
  EXPECT_EQ(assess(s[6], t), FeatureStatus::kFail);
  EXPECT_EQ(worst_first(s, t), (std::vector<std::size_t>{2, 5, 1, 3, 6, 4, 0, 8, 7}));
  const Verdict v = judge(s, t);
  EXPECT_EQ(v.passing, 4u);
  EXPECT_EQ(v.failing, 4u);
  EXPECT_EQ(v.undefined, 1u);
  EXPECT_FALSE(v.converged());
  EXPECT_EQ(v.max_rhat, kInf);
  EXPECT_EQ(v.min_ess_bulk, 10);
  EXPECT_EQ(v.min_ess_tail, 10);
  // Undefined features alone are not a convergence claim; with one passing feature they are
  // reported beside it.
  EXPECT_FALSE(judge(std::vector<FeatureSummary>{s[2]}, t).converged());
  EXPECT_TRUE(judge(std::vector<FeatureSummary>{s[2], s[0]}, t).converged());
}

// --- Regenerative standard error ---------------------------------------------------------------

TEST(Regenerative, TwoStateChainMatchesItsAsymptoticVariance) {
  // Two-state chain leaving 0 w.p. a and 1 w.p. b: each visit to 0 starts an i.i.d. tour, and
  // the mean of I(state = 1) has asymptotic variance pi0 pi1 (1 + l) / (1 - l), l = 1 - a - b
  // (the standard two-state Markov chain CLT; common practice, stated from memory).
  const double a = 0.1, b = 0.3, l = 1 - a - b;
  const double pi1 = a / (a + b), sigma2 = (1 - pi1) * pi1 * (1 + l) / (1 - l);
  const int chains = 4, n = 250000;
  Rng rng = make_stream(1995, 0);
  const Draws d = make_draws(chains, n, [&](int) { return sticky_binary(rng, a, b, n); });
  std::vector<std::vector<std::size_t>> boundaries(chains);
  for (int c = 0; c < chains; ++c)
    for (int t = 0; t < n; ++t)
      if (d.view().chain(c)[t] == 0) boundaries[c].push_back(t);
  const RegenerativeEstimate e = regenerative_mean(d.view(), boundaries);
  EXPECT_NEAR(e.mean, pi1, 0.01);
  const double total = static_cast<double>(chains) * n;
  // The variance estimate is within 5% at this size; the naive i.i.d. formula would be off by
  // a factor (1 + l) / (1 - l) = 4.
  EXPECT_NEAR(e.standard_error * e.standard_error * total / sigma2, 1.0, 0.05);
  EXPECT_GT(e.tours, 500000u);
  EXPECT_LT(e.tour_length_cv, 0.01);
  // The ESS-based MCSE estimates the same standard error.
  EXPECT_NEAR(mcse_mean(d.view()) / e.standard_error, 1.0, 0.05);
}

TEST(Regenerative, RatioEstimatorOnCompleteTours) {
  // One chain: tours [1,4) and [4,6) of the draws 9 | 1 2 3 | 4 5 | 9 (ends left out).
  const Draws d{{9, 1, 2, 3, 4, 5, 9}, 1, 7};
  const std::vector<std::vector<std::size_t>> boundaries = {{1, 4, 6}};
  const RegenerativeEstimate e = regenerative_mean(d.view(), boundaries);
  EXPECT_EQ(e.tours, 2u);
  EXPECT_DOUBLE_EQ(e.mean, 15.0 / 5.0);  // (1+2+3+4+5) / 5
  // Y = (6, 9), N = (3, 2): residuals 6 - 9 = -3 and 9 - 6 = 3.
  EXPECT_DOUBLE_EQ(e.standard_error, std::sqrt(18.0) / 5.0);
  EXPECT_THROW(regenerative_mean(d.view(), std::vector<std::vector<std::size_t>>{{1, 4}}),
               InputError);  // one tour only
  EXPECT_THROW(regenerative_mean(d.view(), std::vector<std::vector<std::size_t>>{{4, 1, 6}}),
               InputError);  // out of order
  EXPECT_THROW(regenerative_mean(d.view(), std::vector<std::vector<std::size_t>>{{1, 4, 8}}),
               InputError);  // past the end
}

// --- Draws CSV ------------------------------------------------------------------------------

std::string write_text(const TempDir& dir, const std::string& name, const std::string& text) {
  std::ofstream(dir.file(name)) << text;
  return dir.file(name);
}

std::string rows(int chains, int iterations) {
  std::string s;
  for (int c = 1; c <= chains; ++c)
    for (int t = 1; t <= iterations; ++t)
      s += std::to_string(c) + "," + std::to_string(t) + "," + std::to_string(c * t % 7) + "\n";
  return s;
}

TEST(DrawsCsv, ReadsQuotedHeaderAndOrdersRows) {
  TempDir dir;
  std::string text = "\"x\",\"iteration\",\"chain\"\r\n";
  for (int t = 6; t >= 1; --t) text += std::to_string(10 * t) + "," + std::to_string(t) + ",2\n";
  for (int t = 1; t <= 6; ++t) text += std::to_string(t) + "," + std::to_string(t) + ",1\n";
  const DrawsTable table = read_draws_csv(write_text(dir, "d.csv", text));
  EXPECT_EQ(table.names, std::vector<std::string>{"x"});
  EXPECT_EQ(table.chains, 2);
  EXPECT_EQ(table.iterations, 6);
  EXPECT_EQ(table.chain_labels, (std::vector<long long>{1, 2}));
  EXPECT_EQ(table.columns[0], (std::vector<double>{1, 2, 3, 4, 5, 6, 10, 20, 30, 40, 50, 60}));
}

TEST(DrawsCsv, ErrorsNameFileAndLine) {
  TempDir dir;
  const std::string head = "chain,iteration,x\n";
  const std::vector<std::pair<std::string, std::string>> cases = {
      {"", ": empty file"},
      {"chain,x\n1,2\n", ":1: no column 'iteration'"},
      {"chain,iteration\n1,1\n", ":1: no quantity columns"},
      {"chain,iteration,x,x\n", ":1: column 'x' appears twice"},
      {head + rows(1, 2) + "1,3,abc\n", ":4: column 'x': 'abc' is not a number"},
      {head + "1,1,NA\n", ":2: column 'x': 'NA' is not a number"},
      {head + "1,1,inf\n", ":2: column 'x': 'inf' is not finite"},
      {head + "1.5,1,2\n", ":2: column 'chain': '1.5' is not an integer"},
      {head + "1,1\n", ":2: 2 fields, but the header has 3"},
      {head + rows(1, 6) + "1,3,0\n", ":8: chain 1 iteration 3 appears twice (also on line 4)"},
      {head + rows(2, 6) + "2,7,1\n", ": chain 2 has 7 draws but chain 1 has 6"},
      {head + rows(2, 3), ": 3 draws per chain; at least 6"},
      {head, ": no draws after the header"},
      {"\"chain,iteration,x\n", ":1: a quoted field is not closed before the end of the file"},
  };
  for (const auto& [text, message] : cases) {
    const std::string path = write_text(dir, "bad.csv", text);
    try {
      read_draws_csv(path);
      ADD_FAILURE() << "no error for: " << text;
    } catch (const InputError& e) {
      EXPECT_NE(std::string(e.what()).find(path + message), std::string::npos)
          << e.what() << " (expected '" << message << "')";
    }
  }
  EXPECT_THROW(read_draws_csv(dir.file("missing.csv")), InputError);
}

// --- covey check --draws-csv
// ------------------------------------------------------------------------

TEST(CheckCommand, JsonMatchesPosteriorWorstFirst) {
  const std::string path = scenario_files().csv("binary");
  const auto run = run_covey("check --draws-csv " + path + " --json");
  ASSERT_EQ(run.exit_code, 0) << run.err;
  const auto j = nlohmann::json::parse(run.out);
  EXPECT_EQ(j["chains"], 4);
  EXPECT_EQ(j["draws_per_chain"], 1000);
  const auto& features = j["features"];
  ASSERT_EQ(features.size(), 5u);
  // The undefined one ("half": R-hat NA in posterior) comes first, then R-hat descending.
  EXPECT_EQ(features[0]["name"], "half");
  EXPECT_TRUE(features[0]["rhat"].is_null());
  EXPECT_EQ(features[0]["status"], "undefined");
  double previous_rhat = INFINITY, max_rhat = 0, min_bulk = INFINITY;
  std::string previous_status;
  for (const auto& f : features) {
    EXPECT_EQ(f["kind"], "quantity");
    const FeatureSummary& theirs = posterior_value("binary", f["name"]);
    const auto number = [](const nlohmann::json& v) {
      return v.is_null() ? kNaN : v.get<double>();
    };
    const std::string what = "check --json " + f["name"].get<std::string>();
    expect_matches(number(f["mean"]), theirs.mean, what + " mean");
    expect_matches(number(f["rhat"]), theirs.rhat, what + " rhat");
    expect_matches(number(f["ess_bulk"]), theirs.ess_bulk, what + " ess_bulk");
    expect_matches(number(f["ess_tail"]), theirs.ess_tail, what + " ess_tail");
    expect_matches(number(f["mcse"]), theirs.mcse, what + " mcse");
    if (f["rhat"].is_null()) continue;
    max_rhat = std::max(max_rhat, theirs.rhat);
    min_bulk = std::min(min_bulk, theirs.ess_bulk);
    if (f["status"] == previous_status) {
      EXPECT_LE(theirs.rhat, previous_rhat);
    }
    previous_status = f["status"];
    previous_rhat = theirs.rhat;
  }
  EXPECT_NEAR(j["max_rhat"].get<double>(), max_rhat, 1e-6 * max_rhat);
  EXPECT_NEAR(j["min_ess_bulk"].get<double>(), min_bulk, 1e-6 * min_bulk);
  EXPECT_EQ(j["verdict"]["undefined"], 1);
}

TEST(CheckCommand, TextReportAndStrictExitCode) {
  const std::string shift = scenario_files().csv("shift");
  auto run = run_covey("check --draws-csv " + shift);
  EXPECT_EQ(run.exit_code, 0) << run.err;
  EXPECT_NE(run.out.find("shifted"), std::string::npos);
  EXPECT_NE(run.out.find("verdict: not converged: 1 of 1 quantities fail"), std::string::npos)
      << run.out;
  run = run_covey("check --draws-csv " + shift + " --strict");
  EXPECT_EQ(run.exit_code, 4);
  EXPECT_NE(run.err.find("--strict"), std::string::npos) << run.err;
  // i.i.d. draws converge; the strict check passes.
  TempDir dir;
  const std::string only_iid = dir.file("iid.csv");
  {
    const Draws& d = scenario("ar1_odd")[2].draws;
    write_draws_csv(only_iid, {{"iid", d}});
  }
  run = run_covey("check --draws-csv " + only_iid + " --strict --threads 1");
  EXPECT_EQ(run.exit_code, 0) << run.out << run.err;
  EXPECT_NE(run.out.find("verdict: converged"), std::string::npos) << run.out;
  // A stricter threshold than the draws support fails.
  run = run_covey("check --draws-csv " + only_iid + " --strict --ess 100000");
  EXPECT_EQ(run.exit_code, 4);
  // Constant draws only: nothing can be assessed, so no convergence claim.
  run = run_covey("check --draws-csv " + scenario_files().csv("constant") + " --strict --json");
  EXPECT_EQ(run.exit_code, 4);
  EXPECT_FALSE(nlohmann::json::parse(run.out)["verdict"]["converged"].get<bool>());
}

TEST(CheckCommand, BadInputGivesOneLineError) {
  TempDir dir;
  const std::string missing = write_text(dir, "m.csv", "chain,x\n1,2\n");
  auto run = run_covey("check --draws-csv " + missing);
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_EQ(run.err, "covey: error: " + missing +
                         ":1: no column 'iteration' in the header (expected chain, iteration "
                         "and one column per quantity)\n");
  const std::string bad = write_text(dir, "b.csv", "chain,iteration,x\n1,1,0.5\n1,2,x1\n");
  run = run_covey("check --draws-csv " + bad);
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_EQ(run.err, "covey: error: " + bad + ":3: column 'x': 'x1' is not a number\n");
  const std::string unequal =
      write_text(dir, "u.csv", "chain,iteration,x\n" + rows(2, 8) + "1,9,1\n");
  run = run_covey("check --draws-csv " + unequal);
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_NE(run.err.find(unequal + ": chain 2 has 8 draws but chain 1 has 9"), std::string::npos)
      << run.err;
  const std::string few = write_text(dir, "f.csv", "chain,iteration,x\n" + rows(2, 4));
  run = run_covey("check --draws-csv " + few);
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_NE(run.err.find(few + ": 4 draws per chain; at least 6"), std::string::npos) << run.err;
  run = run_covey("check " + few);
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_NE(run.err.find("--draws"), std::string::npos) << run.err;
  run = run_covey("check --draws-csv " + dir.file("nope.csv"));
  EXPECT_NE(run.exit_code, 0);
  EXPECT_NE(run.err.find("nope.csv"), std::string::npos) << run.err;
  run = run_covey("check --draws-csv " + few + " --rhat 0.9");
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_EQ(run.err, "covey: error: check: --rhat must exceed 1, got 0.9\n");
  run = run_covey("check --help");
  EXPECT_EQ(run.exit_code, 0);
  EXPECT_NE(run.out.find("--strict"), std::string::npos);
}

}  // namespace
}  // namespace covey
