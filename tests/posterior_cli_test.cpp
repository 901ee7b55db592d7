// `covey check RUN.h5`, `covey compare A B` and `covey report RUN.h5` on real runs of small
// tables, against full enumeration of all DAGs (n = 5) and against R's posterior package.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>

#include "covey/chains/chain_run_file.hpp"
#include "covey/core/logmath.hpp"
#include "covey/diagnostics/diagnostics.hpp"
#include "covey/graph/cover_class.hpp"
#include "covey/graph/dag.hpp"
#include "covey/graph/enumerate.hpp"
#include "covey/scores/score_io.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::run_covey;
using testing_util::TempDir;

double number(const nlohmann::json& v) {
  return v.is_null() ? std::nan("") : v.get<double>();
}

// Exact probabilities by enumerating every DAG of the table, over all DAGs and within D_k.
struct Enumerated {
  double log_z = 0, log_zk = 0;
  std::map<std::pair<int, int>, double> edge_all, edge_k;
};

Enumerated enumerate_table(const ScoreTable& table, int k) {
  LogSumAccumulator all, inside;
  std::vector<std::pair<Dag, double>> dags;
  for_each_dag(table, [&](const Dag& d, double lw) {
    all.add(lw);
    if (in_cover_class(d, k)) inside.add(lw);
    dags.emplace_back(d, lw);
  });
  Enumerated e;
  e.log_z = all.value();
  e.log_zk = inside.value();
  const int n = table.num_variables();
  for (const auto& [d, lw] : dags)
    for (int u = 0; u < n; ++u)
      for (int v = 0; v < n; ++v)
        if (d.has_edge(u, v)) {
          e.edge_all[{u, v}] += std::exp(lw - e.log_z);
          if (in_cover_class(d, k)) e.edge_k[{u, v}] += std::exp(lw - e.log_zk);
        }
  return e;
}

// One chain run and one batch of cover-bounded draws of a 5-variable table, shared by the tests.
struct Fixture {
  TempDir dir;
  std::string table_path = dir.file("scores.tsv");
  std::string run = dir.file("run.h5");
  std::string cover_draws = dir.file("cover.h5");
  ScoreTable table = testing_util::random_full_table(5, 2, 61);
  int k = 2;
  Fixture() {
    write_scores_tsv(table, table_path);
    auto r = run_covey("chain " + table_path +
                       " --chains 4 --steps 200000 --thin 50 --seed 11 --teleport-cover 2 "
                       "--teleport-rate 0.05 -o " +
                       run);
    if (r.exit_code != 0) throw std::runtime_error("chain failed: " + r.err);
    r = run_covey("draw " + table_path + " --cover 2 --draws 20000 --seed 3 -o " + cover_draws);
    if (r.exit_code != 0) throw std::runtime_error("draw failed: " + r.err);
  }
};

const Fixture& fixture() {
  static const Fixture f;
  return f;
}

TEST(CheckRun, JsonAgreesWithTheDiagnosticsOfTheStoredDraws) {
  const Fixture& fx = fixture();
  const auto r = run_covey("check " + fx.run + " --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["chains"], 4);
  EXPECT_EQ(j["draws_per_chain"], 4000);
  for (const char* key : {"max_rhat", "min_ess_bulk", "min_ess_tail", "features"})
    EXPECT_TRUE(j.contains(key)) << key;
  // 20 edges, 10 adjacencies, 20 ancestor relations and the log score.
  ASSERT_EQ(j["features"].size(), 51u);
  const ChainRun run = ChainRun::open(fx.run);
  const RunFeatures draws(run, true);
  std::vector<double> values(std::size_t(draws.chains()) * draws.iterations());
  std::map<std::string, int> index;
  for (int v = 0; v < 5; ++v) index[fx.table.name(v)] = v;
  int regenerative = 0;
  for (const auto& f : j["features"]) {
    const std::string kind = f["kind"];
    if (kind == "score") {
      EXPECT_FALSE(f.contains("from"));
      draws.log_score(values);
    } else {
      const int a = index.at(f["from"]), b = index.at(f["to"]);
      if (kind == "edge") draws.edge(a, b, values);
      if (kind == "adjacency") draws.adjacency(a, b, values);
      if (kind == "ancestor") draws.ancestor(a, b, values);
    }
    const FeatureSummary s = summarize({values, draws.chains(), draws.iterations()});
    const std::string what = kind + " " + f.value("from", "") + " " + f.value("to", "");
    const double mean = number(f.contains("probability") ? f["probability"] : f["mean"]);
    EXPECT_DOUBLE_EQ(mean, s.mean) << what;
    if (std::isnan(s.rhat)) {
      EXPECT_TRUE(f["rhat"].is_null()) << what;
      EXPECT_EQ(f["status"], "undefined") << what;  // constant: never reported as converged
    } else {
      EXPECT_DOUBLE_EQ(number(f["rhat"]), s.rhat) << what;
      EXPECT_DOUBLE_EQ(number(f["ess_bulk"]), s.ess_bulk) << what;
      EXPECT_DOUBLE_EQ(number(f["mcse"]), s.mcse) << what;
    }
    // With teleports every 20 steps on average, tours are short and the regenerative standard
    // error agrees with the MCSE to within a factor 1.5 (both estimate the same sd).
    if (kind != "score" && f.contains("regenerative_se") && !f["regenerative_se"].is_null() &&
        std::isfinite(s.mcse) && s.mcse > 0) {
      ++regenerative;
      EXPECT_NEAR(std::log(number(f["regenerative_se"]) / s.mcse), 0.0, std::log(1.5)) << what;
    }
  }
  EXPECT_GT(regenerative, 10);
}

TEST(CheckRun, AncestorSetsMatchTheDagModuleDrawByDraw) {
  const Fixture& fx = fixture();
  const ChainRun run = ChainRun::open(fx.run);
  const RunFeatures draws(run, true);
  const auto rows = run.draws(2);
  std::vector<double> values(std::size_t(draws.chains()) * draws.iterations());
  for (int u = 0; u < 5; ++u)
    for (int v = 0; v < 5; ++v) {
      if (u == v) continue;
      draws.ancestor(u, v, values);
      for (std::size_t t = 0; t < run.num_draws(); t += 97) {
        Dag d(5);
        for (int w = 0; w < 5; ++w) d.parent_mask(std::size_t(w)) = rows[t * 5 + std::size_t(w)];
        const bool path = (ancestor_masks(d)[std::size_t(v)] >> u) & 1U;
        ASSERT_EQ(values[2 * run.num_draws() + t], path ? 1.0 : 0.0) << u << "~>" << v << " " << t;
      }
    }
  // Tours start at the first kept draw at or after each regeneration step.
  const auto steps = run.draw_steps(1);
  const auto regen = run.regenerations(1);
  ASSERT_GT(regen.size(), 100u);
  const auto& starts = draws.tour_starts()[1];
  for (std::size_t i = 1; i < starts.size(); ++i) ASSERT_LT(starts[i - 1], starts[i]);
  for (const std::int64_t r : regen) {
    const auto at = std::lower_bound(steps.begin(), steps.end(), r) - steps.begin();
    EXPECT_TRUE(std::binary_search(starts.begin(), starts.end(), std::size_t(at))) << r;
  }
}

// Source: R's posterior package (Debian r-cran-posterior), run on the series of a real covey
// trace written as draws CSV; covey check must agree to 1e-6 relative.
TEST(CheckRun, RealCoveyTraceAgreesWithRPosterior) {
  const Fixture& fx = fixture();
  const ChainRun run = ChainRun::open(fx.run);
  const RunFeatures draws(run);
  TempDir dir;
  const std::string csv = dir.file("trace.csv");
  std::vector<std::pair<int, int>> edges = draws.edges_seen();
  {
    std::ofstream out(csv);
    out << "chain,iteration,score";
    for (const auto& [u, v] : edges) out << ",e_" << u << "_" << v;
    out << "\n";
    std::vector<double> score(std::size_t(draws.chains()) * draws.iterations());
    draws.log_score(score);
    std::vector<std::vector<double>> series;
    for (const auto& [u, v] : edges) {
      series.emplace_back(score.size());
      draws.edge(u, v, series.back());
    }
    out.precision(17);
    for (int c = 0; c < draws.chains(); ++c)
      for (int t = 0; t < draws.iterations(); ++t) {
        const std::size_t i = std::size_t(c) * draws.iterations() + t;
        out << c + 1 << "," << t + 1 << "," << score[i];
        for (const auto& s : series) out << "," << s[i];
        out << "\n";
      }
  }
  const std::string ref = dir.file("ref.csv");
  const auto r_run =
      testing_util::run_shell(std::string(COVEY_RSCRIPT) + " " + COVEY_SOURCE_DIR +
                              "/tests/reference/posterior_reference.R summary " + ref + " " + csv);
  ASSERT_EQ(r_run.exit_code, 0) << r_run.err;
  std::map<std::string, std::vector<double>> theirs;
  {
    std::ifstream in(ref);
    std::string line;
    std::getline(in, line);
    EXPECT_EQ(line.rfind("# posterior ", 0), 0u) << line;
    std::getline(in, line);
    while (std::getline(in, line)) {
      std::vector<std::string> f;
      std::stringstream ss(line);
      for (std::string cell; std::getline(ss, cell, ',');) f.push_back(cell);
      ASSERT_EQ(f.size(), 8u) << line;
      std::vector<double> values;
      for (std::size_t i = 2; i < 8; ++i)
        values.push_back(f[i] == "NA" ? std::nan("") : std::stod(f[i]));
      theirs[f[1]] = values;  // mean, rhat, ess_bulk, ess_tail, ess_mean, mcse_mean
    }
  }
  const auto r = run_covey("check " + fx.run + " --json --features edges,score");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::map<std::string, int> index;
  for (int v = 0; v < 5; ++v) index[fx.table.name(v)] = v;
  int compared = 0;
  const auto checked = nlohmann::json::parse(r.out);
  for (const auto& f : checked["features"]) {
    const std::string name = f["kind"] == "score" ? "score"
                                                  : "e_" + std::to_string(index.at(f["from"])) +
                                                        "_" + std::to_string(index.at(f["to"]));
    if (!theirs.count(name)) continue;  // an edge never present: not in the CSV
    const auto& t = theirs[name];
    const double ours[] = {number(f.contains("mean") ? f["mean"] : f["probability"]),
                           number(f["rhat"]),
                           number(f["ess_bulk"]),
                           number(f["ess_tail"]),
                           number(f["ess_mean"]),
                           number(f["mcse"])};
    for (int i = 0; i < 6; ++i) {
      if (std::isnan(t[std::size_t(i)])) {
        EXPECT_TRUE(std::isnan(ours[i])) << name << " column " << i;
      } else {
        EXPECT_NEAR(ours[i], t[std::size_t(i)], 1e-6 * std::fabs(t[std::size_t(i)]))
            << name << " column " << i;
      }
    }
    ++compared;
  }
  EXPECT_EQ(compared, int(edges.size()) + 1);
}

TEST(CheckRun, SeveralRunFilesAreTakenTogetherAndTextShowsTheVerdict) {
  const Fixture& fx = fixture();
  TempDir dir;
  const std::string other = dir.file("other.h5");
  auto r = run_covey("chain " + fx.table_path +
                     " --chains 2 --steps 200000 --thin 50 --seed 12 -o " + other);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  r = run_covey("check " + fx.run + " " + other + " --json --features edges");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["chains"], 6);
  EXPECT_EQ(j["features"].size(), 20u);
  r = run_covey("check " + fx.run + " --top 3");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("verdict: "), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("regen_se"), std::string::npos) << r.out;
  // A run of another table cannot be pooled.
  const std::string table2 = dir.file("t2.tsv");
  write_scores_tsv(testing_util::random_full_table(5, 2, 62), table2);
  const std::string run2 = dir.file("run2.h5");
  r = run_covey("chain " + table2 + " --chains 2 --steps 2000 --thin 10 -o " + run2);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  r = run_covey("check " + fx.run + " " + run2);
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.err.find(run2 + ": made from another score table"), std::string::npos) << r.err;
  r = run_covey("check " + fx.run + " --features edges,colours");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.err.find("--features: unknown feature kind 'colours'"), std::string::npos) << r.err;
}

// ---- compare ------------------------------------------------------------------------------

// Chains against the exact posterior over all DAGs (enumeration): every edge within 4.5
// standard errors (MCSE); the mass of D_2 from the chains against its enumerated value.
TEST(Compare, ChainRunAgainstExactTableWithinMonteCarloError) {
  const Fixture& fx = fixture();
  const Enumerated e = enumerate_table(fx.table, fx.k);
  const auto r = run_covey("compare " + fx.run + " " + fx.table_path + " --cover 2 --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  std::map<std::string, int> index;
  for (int v = 0; v < 5; ++v) index[fx.table.name(v)] = v;
  double previous = INFINITY;
  int edges = 0;
  for (const auto& f : j["features"]) {
    for (const char* key : {"kind", "from", "to", "a", "b", "diff", "se"})
      ASSERT_TRUE(f.contains(key)) << key;
    EXPECT_LE(std::fabs(number(f["diff"])), previous);  // largest first
    previous = std::fabs(number(f["diff"]));
    if (f["kind"] != "edge") continue;
    const int u = index.at(f["from"]), v = index.at(f["to"]);
    const double exact = e.edge_all.count({u, v}) ? e.edge_all.at({u, v}) : 0.0;
    EXPECT_NEAR(number(f["b"]), exact, 1e-9) << u << "->" << v;
    if (!f["se"].is_null()) {
      EXPECT_LE(std::fabs(number(f["diff"])), 4.5 * number(f["se"]) + 1e-12)
          << u << "->" << v << " a " << f["a"] << " b " << f["b"];
      ++edges;
    }
  }
  EXPECT_GT(edges, 10);
  const auto& m = j["mass_in_cover_class"];
  ASSERT_FALSE(m.is_null());
  EXPECT_EQ(m["k"], 2);
  EXPECT_EQ(m["side"], "a");  // the chain run
  const double exact_mass = std::exp(e.log_zk - e.log_z);
  EXPECT_NEAR(number(m["estimate"]), exact_mass, 4.5 * number(m["se"]));
  EXPECT_TRUE(j["log_total_weight_all"].is_null());  // no cover-bounded side
}

// Cover-bounded exact draws against the exact table: the draws' edge frequencies against the
// enumerated D_2 probabilities (binomial standard errors), the mass of D_2 exact (n <= 6), and
// log Z over all DAGs recovered as log Z_2 - log P(D_2 | data) with an interval covering it.
TEST(Compare, CoverDrawsAgainstExactTableGivesLogZOverAllDags) {
  const Fixture& fx = fixture();
  const Enumerated e = enumerate_table(fx.table, fx.k);
  const auto r = run_covey("compare " + fx.cover_draws + " " + fx.table_path + " --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  std::map<std::string, int> index;
  for (int v = 0; v < 5; ++v) index[fx.table.name(v)] = v;
  for (const auto& f : j["features"]) {
    if (f["kind"] != "edge") continue;
    const int u = index.at(f["from"]), v = index.at(f["to"]);
    const double pk = e.edge_k.count({u, v}) ? e.edge_k.at({u, v}) : 0.0;
    const double se = std::sqrt(pk * (1 - pk) / 20000);
    EXPECT_NEAR(number(f["a"]), pk, 4.5 * se + 1e-12) << u << "->" << v;
  }
  const auto& m = j["mass_in_cover_class"];
  EXPECT_EQ(m["method"], "enumeration");
  EXPECT_NEAR(number(m["estimate"]), std::exp(e.log_zk - e.log_z), 1e-9);
  const auto& w = j["log_total_weight_all"];
  ASSERT_FALSE(w.is_null());
  EXPECT_NEAR(number(w["exact"]), e.log_z, 1e-9);
  EXPECT_LE(number(w["ci95"][0]), e.log_z);
  EXPECT_GE(number(w["ci95"][1]), e.log_z);
  EXPECT_LT(number(w["ci95"][1]) - number(w["ci95"][0]), 0.1);
}

// The chain's mass of D_2 with the cover draws' log Z_2: log Z over all DAGs by the delta
// method (docs/mathematics.md section 7), its interval covering the enumerated value.
TEST(Compare, ChainRunAgainstCoverDrawsEstimatesLogZ) {
  const Fixture& fx = fixture();
  const Enumerated e = enumerate_table(fx.table, fx.k);
  const auto r = run_covey("compare " + fx.cover_draws + " " + fx.run + " --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["mass_in_cover_class"]["side"], "b");
  EXPECT_EQ(j["mass_in_cover_class"]["method"], "chain run (MCSE)");
  const auto& w = j["log_total_weight_all"];
  ASSERT_FALSE(w.is_null());
  EXPECT_FALSE(w.contains("exact"));
  EXPECT_LE(number(w["ci95"][0]), e.log_z);
  EXPECT_GE(number(w["ci95"][1]), e.log_z);
  // Text output names both sides and the estimate.
  const auto text = run_covey("compare " + fx.cover_draws + " " + fx.run + " --top 3");
  ASSERT_EQ(text.exit_code, 0) << text.err;
  EXPECT_NE(text.out.find("log Z over all DAGs"), std::string::npos) << text.out;
  EXPECT_NE(text.out.find("exact draws from D_2"), std::string::npos) << text.out;
}

TEST(Compare, BadInputNamesTheFile) {
  const Fixture& fx = fixture();
  TempDir dir;
  const std::string other = dir.file("other.tsv");
  write_scores_tsv(testing_util::random_full_table(5, 2, 63), other);
  auto r = run_covey("compare " + fx.run + " " + other);
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.err.find("different score tables"), std::string::npos) << r.err;
  const std::string junk = dir.file("junk.h5");
  testing_util::write_file(junk, "not hdf5");
  r = run_covey("compare " + fx.run + " " + junk);
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.err.find(junk), std::string::npos) << r.err;
  r = run_covey("compare " + fx.run + " " + fx.table_path + " --features score");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.err.find("--features"), std::string::npos) << r.err;
  r = run_covey("compare " + fx.run + " " + dir.file("missing.h5"));
  EXPECT_NE(r.exit_code, 0);
  EXPECT_NE(r.err.find("missing.h5"), std::string::npos) << r.err;
}

// ---- report -------------------------------------------------------------------------------

TEST(ReportCommand, WritesThePageWithComparisonAndRefusesForeignFolders) {
  const Fixture& fx = fixture();
  TempDir dir;
  const std::string out = dir.file("report");
  auto r =
      run_covey("report " + fx.run + " --compare " + fx.cover_draws + " -o " + out + " --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["page"], out + "/index.html");
  const std::string html = testing_util::read_file(out + "/index.html");
  for (const char* part : {"trace.png", "rhat.png", "ess.png", "edges.png", "consensus.png",
                           "comparison.png", "not proven cause", "vertex cover of at most 2",
                           "feature-trace-1.png", "feature-trace-3.png", "The most probable links"})
    EXPECT_NE(html.find(part), std::string::npos) << part;
  // No internal values: the unset cover limit (-1) and raw option keys are not shown.
  EXPECT_EQ(html.find(">-1<"), std::string::npos);
  EXPECT_EQ(html.find("cover_limit"), std::string::npos);
  EXPECT_NE(html.find("from D_"), std::string::npos);  // the teleports, in words
  EXPECT_NE(html.find("<h2>Edge probabilities: chain run ("), std::string::npos);
  for (const char* image : {"trace.png", "comparison.svg", "consensus.svg"})
    EXPECT_TRUE(std::filesystem::exists(out + "/" + image)) << image;
  // A folder that is not a covey report is never replaced.
  const std::string foreign = dir.file("mine");
  std::filesystem::create_directory(foreign);
  testing_util::write_file(foreign + "/notes.txt", "keep me");
  r = run_covey("report " + fx.run + " -o " + foreign);
  EXPECT_NE(r.exit_code, 0);
  EXPECT_EQ(testing_util::read_file(foreign + "/notes.txt"), "keep me");
  // A comparison of another table fails before anything is written.
  const std::string other = dir.file("other.tsv");
  write_scores_tsv(testing_util::random_full_table(5, 2, 64), other);
  r = run_covey("report " + fx.run + " --compare " + other + " -o " + dir.file("r2"));
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.err.find("another score table"), std::string::npos) << r.err;
  EXPECT_FALSE(std::filesystem::exists(dir.file("r2")));
}

// ---- export -------------------------------------------------------------------------------

std::vector<std::vector<std::string>> read_simple_csv(const std::string& path) {
  std::vector<std::vector<std::string>> rows;
  std::ifstream in(path);
  for (std::string line; std::getline(in, line);) {
    std::vector<std::string> f;
    std::stringstream ss(line);
    for (std::string cell; std::getline(ss, cell, ',');) f.push_back(cell);
    if (!line.empty() && line.back() == ',') f.push_back("");
    rows.push_back(f);
  }
  return rows;
}

// The probabilities CSV holds check's numbers; the edge draws are the run's draws, which R's
// posterior (as_draws_df of read.csv, then rhat) and covey check --draws-csv both read.
TEST(Export, ProbabilitiesEqualCheckAndEdgeDrawsAreReadByRPosterior) {
  const Fixture& fx = fixture();
  TempDir dir;
  const std::string probabilities = dir.file("p.csv"), edge_draws = dir.file("d.csv");
  auto r = run_covey("export " + fx.run + " --probabilities " + probabilities + " --edge-draws " +
                     edge_draws);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto rows = read_simple_csv(probabilities);
  ASSERT_EQ(rows.size(), 51u);  // header, 20 edges, 10 adjacencies, 20 ancestor relations
  EXPECT_EQ(rows[0], (std::vector<std::string>{"kind", "from", "to", "probability", "mcse",
                                               "mcse_reliable", "rhat", "ess_bulk", "ess_tail"}));
  r = run_covey("check " + fx.run + " --json --features edges,adjacencies,ancestors");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::map<std::string, nlohmann::json> checked;
  const auto check_json = nlohmann::json::parse(r.out);
  for (const auto& f : check_json["features"])
    checked[f["kind"].get<std::string>() + " " + f["from"].get<std::string>() + " " +
            f["to"].get<std::string>()] = f;
  for (std::size_t i = 1; i < rows.size(); ++i) {
    const auto& row = rows[i];
    ASSERT_EQ(row.size(), 9u);
    const std::string key = row[0] + " " + row[1] + " " + row[2];
    ASSERT_TRUE(checked.count(key)) << key;
    const nlohmann::json& f = checked.at(key);
    EXPECT_DOUBLE_EQ(std::stod(row[3]), f["probability"].get<double>()) << row[1] << row[2];
    if (f["mcse"].is_null())
      EXPECT_EQ(row[4], "NA");
    else
      EXPECT_DOUBLE_EQ(std::stod(row[4]), f["mcse"].get<double>());
  }
  // Edge draws: 4 chains x 4000 draws, 20 edge columns.
  const auto draws = read_simple_csv(edge_draws);
  ASSERT_EQ(draws.size(), 16001u);
  EXPECT_EQ(draws[0].size(), 23u);
  EXPECT_EQ(draws[0][0], ".chain");
  EXPECT_EQ(draws[1][0], "1");
  EXPECT_EQ(draws.back()[2], "16000");
  // covey check reads it back: the same R-hat as from the run itself.
  r = run_covey("check --draws-csv " + edge_draws + " --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::map<std::string, double> rhat_of_column;
  const auto draws_json = nlohmann::json::parse(r.out);
  for (const auto& f : draws_json["features"]) rhat_of_column[f["name"]] = number(f["rhat"]);
  // The first edge that is not constant (R-hat defined), FROM->TO.
  std::size_t position = 3;
  while (position + 1 < draws[0].size() && std::isnan(rhat_of_column[draws[0][position]]))
    ++position;
  const std::string column = draws[0][position];
  const std::string from = column.substr(0, column.find("->")),
                    to = column.substr(column.find("->") + 2);
  const double ours = number(checked.at("edge " + from + " " + to)["rhat"]);
  ASSERT_TRUE(rhat_of_column.count(column)) << column;
  EXPECT_DOUBLE_EQ(rhat_of_column.at(column), ours);
  // R's posterior reads it directly (reference: posterior::as_draws_df and posterior::rhat).
  if (std::string(COVEY_RSCRIPT).empty()) GTEST_SKIP() << "Rscript not found";
  const std::string script = dir.file("read.R");
  testing_util::write_file(
      script,
      "suppressPackageStartupMessages(library(posterior))\n"
      "x <- as_draws_df(read.csv(commandArgs(TRUE)[1]))\n"
      "stopifnot(nchains(x) == 4, niterations(x) == 4000, nvariables(x) == 20)\n"
      "v <- variables(x)[as.integer(commandArgs(TRUE)[2])]\n"
      "cat(sprintf('%.17g', rhat(extract_variable_matrix(x, v))))\n");
  const auto r_run = testing_util::run_shell(std::string(COVEY_RSCRIPT) + " " + script + " " +
                                             edge_draws + " " + std::to_string(position - 2));
  ASSERT_EQ(r_run.exit_code, 0) << r_run.err;
  ASSERT_FALSE(std::isnan(ours)) << column;
  EXPECT_NEAR(std::stod(r_run.out), ours, 1e-6 * ours);
}

TEST(Export, RefusesToReplaceFilesWithoutForce) {
  const Fixture& fx = fixture();
  TempDir dir;
  const std::string path = dir.file("p.csv");
  testing_util::write_file(path, "keep me");
  auto r = run_covey("export " + fx.run + " --probabilities " + path);
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.err.find("--force"), std::string::npos) << r.err;
  EXPECT_EQ(testing_util::read_file(path), "keep me");
  r = run_covey("export " + fx.run + " --probabilities " + path + " --features edges --force");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(read_simple_csv(path).size(), 21u);
}

}  // namespace
}  // namespace covey
