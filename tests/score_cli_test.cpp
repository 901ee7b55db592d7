// `covey score` from the command line: every bad input gives its message and a non-zero exit and
// leaves an existing output file untouched; a good run writes HDF5 that h5py (not covey) reads
// back with the right variables, scores and metadata (tests/reference/read_scores_h5.py).
#include <gtest/gtest.h>

#include <filesystem>

#include "covey/data/data.hpp"
#include "covey/scores/score_io.hpp"
#include "covey/scores/scores.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::run_covey;
using testing_util::write_file;

std::string format_row(double a, double b, double c) {
  char text[96];
  std::snprintf(text, sizeof text, "%.17g,%.17g,%.17g\n", a, b, c);
  return text;
}

class ScoreCli : public ::testing::Test {
 protected:
  void SetUp() override {
    write_file(dir.file("good.csv"), "x,y,z\na,u,p\nb,u,q\na,v,q\nb,v,p\na,u,q\n");
    write_file(dir.file("gauss.csv"), "g1,g2,g3\n1.5,2,3\n0.5,1,-2\n2,0.25,1\n3,1,0\n");
    write_file(dir.file("mixed.csv"), "x,n\na,1\nb,2\n");
    write_file(dir.file("require_mixed.tsv"), "n\tx\n");
    write_file(dir.file("missing.csv"), "x,y\na,u\nb,NA\na,v\n");
    write_file(dir.file("constant.csv"), "x,y\na,u\nb,u\n");
    write_file(dir.file("comma.csv"), "\"x,1\",y\na,u\nb,v\n");
    write_file(dir.file("forbid_bad.tsv"), "x\ty\nx\tw\n");
    write_file(dir.file("forbid.tsv"), "x\ty\n");
    write_file(dir.file("require.tsv"), "z\ty\nx\ty\n");
  }
  std::string path(const std::string& name) const { return dir.file(name); }
  testing_util::TempDir dir;
};

TEST_F(ScoreCli, BadInputsFailAndLeaveTheOutputUntouched) {
  const std::string out = path("out.h5");
  const std::string sentinel = "an earlier result that must survive\n";
  write_file(out, sentinel);
  write_file(path("out.tsv"), sentinel);
  const std::string good = path("good.csv");
  const std::vector<std::pair<std::string, std::string>> cases = {
      {path("none.csv") + " -o " + out, "none.csv: cannot open for reading"},
      {path("mixed.csv") + " -o " + out + " --require " + path("require_mixed.tsv"),
       "makes a Gaussian column a parent of a discrete one"},
      {path("missing.csv") + " -o " + out, "missing.csv:3: missing value in column 'y'"},
      {path("constant.csv") + " -o " + out, "column 'y' has a single level 'u'"},
      {good + " -o " + out + " --discrete --gaussian", "excludes"},
      {path("good.csv") + " -o " + out + " --gaussian", "good.csv:2: column 'x': 'a' is not"},
      {good + " -o " + out + " --prior flat", "--prior"},
      {good + " -o " + out + " --edge-penalty 2", "--edge-penalty needs --prior edge-penalty"},
      {good + " -o " + out + " --memory-limit 12Q", "--memory-limit: '12Q' is not a memory size"},
      {good + " -o " + out + " --memory-limit 1K", "more than the memory limit of 1.00 KiB"},
      {good + " -o " + out + " --forbid " + path("forbid_bad.tsv"),
       "forbid_bad.tsv:2: unknown variable 'w'"},
      {good + " -o " + out + " --forbid " + path("forbid.tsv") + " --require " +
           path("require.tsv"),
       "require.tsv:2: required edge 'x' -> 'y' is also forbidden (" + path("forbid.tsv") + ":1)"},
      {good + " -o " + out + " --require " + path("require.tsv") + " --max-indegree 1",
       "node 'y' has 2 required parents (--require), more than --max-indegree 1"},
      {good + " -o " + out + " --bge-alpha-w 9", "--bge-alpha-w applies to Gaussian data"},
      {path("gauss.csv") + " -o " + out + " --equivalent-sample-size 2",
       "--equivalent-sample-size applies to discrete data"},
      {path("gauss.csv") + " -o " + out + " --bge-alpha-w 4",
       "--bge-alpha-w must exceed n + 1 = 4"},
      {good + " -o " + out + " --equivalent-sample-size -1", "--equivalent-sample-size"},
      {good + " -o " + out + " --candidates 65", "--candidates"},
      {good + " -o " + out + " --max-indegree -2", "--max-indegree"},
      {good + " -o " + path("no/such/dir/out.h5"), "output directory"},
      {path("comma.csv") + " -o " + path("out.tsv"), "cannot be written to TSV"},
  };
  // With --force, so that each case reaches its own error: a bad input leaves the existing
  // output as it was even when replacing it was allowed.
  for (const auto& [args, fragment] : cases) {
    const auto r = run_covey("score " + args + " --force");
    EXPECT_NE(r.exit_code, 0) << args;
    EXPECT_NE(r.err.find(fragment), std::string::npos)
        << "args: " << args << "\nexpected: " << fragment << "\nstderr: " << r.err;
    EXPECT_EQ(testing_util::read_file(out), sentinel) << args;
    EXPECT_EQ(testing_util::read_file(path("out.tsv")), sentinel) << args;
  }
  // No temporary files are left behind.
  for (const auto& entry : std::filesystem::directory_iterator(dir.path()))
    EXPECT_EQ(entry.path().filename().string().find(".tmp"), std::string::npos) << entry.path();
  // The memory-limit error exits with the resource code.
  EXPECT_EQ(run_covey("score " + good + " -o " + out + " --memory-limit 1K --force").exit_code, 3);
}

TEST_F(ScoreCli, JsonSummaryAndTsvOutput) {
  write_file(path("incomplete.csv"), "x,y,z\na,u,p\nb,,q\na,v,q\nb,v,p\nNA,u,q\n");
  const auto r = run_covey("score " + path("incomplete.csv") + " -o " + path("s.tsv") +
                           " --drop-incomplete --json --threads 1");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto summary = nlohmann::json::parse(r.out);
  EXPECT_EQ(summary["variables"], 3);
  EXPECT_EQ(summary["rows"], 3);
  EXPECT_EQ(summary["rows_dropped"], 2);
  EXPECT_EQ(summary["parent_sets"], 12);  // 3 nodes x 4 subsets of 2 others
  EXPECT_GE(summary["seconds"].get<double>(), 0.0);
  EXPECT_GT(summary["memory_bytes"].get<double>(), 0.0);
  const ScoreTable t = read_scores_tsv(path("s.tsv"));
  EXPECT_EQ(t.total_parent_sets(), 12u);
  const std::string head = testing_util::read_file(path("s.tsv")).substr(0, 40);
  EXPECT_EQ(head.rfind("variables\tx\ty\tz\nnode\tparents\tlog_score\n", 0), 0u) << head;
}

TEST_F(ScoreCli, Hdf5ReadsBackWithH5py) {
  const std::string out = path("scores.h5");
  const auto r = run_covey("score " + path("good.csv") + " -o " + out +
                           " --equivalent-sample-size 4 --prior parent-count --max-indegree 1");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  // The same table computed by the library.
  ScoreOptions options;
  options.equivalent_sample_size = 4;
  options.prior = PriorKind::kParentCount;
  options.max_indegree = 1;
  const ScoreTable expected = score_data(read_csv(path("good.csv")), options);

  const auto file = testing_util::run_reference_python("read_scores_h5.py", out);
  const auto& attrs = file["attributes"];
  EXPECT_EQ(attrs["format"], "covey-scores");
  EXPECT_EQ(attrs["score"], "bdeu");
  EXPECT_EQ(attrs["prior"], "parent-count");
  EXPECT_EQ(attrs["max_indegree"], 1);
  EXPECT_EQ(attrs["num_rows"], 5);
  EXPECT_EQ(attrs["parameters"]["equivalent_sample_size"], 4.0);
  EXPECT_EQ(attrs["source"], path("good.csv"));
  EXPECT_NE(attrs["command_line"].get<std::string>().find("--prior parent-count"),
            std::string::npos);
  ASSERT_EQ(file["variables"].size(), 3u);
  EXPECT_EQ(file["variables"][1]["name"], "y");
  EXPECT_EQ(file["variables"][1]["kind"], "discrete");
  EXPECT_EQ(file["variables"][2]["levels"], (std::vector<std::string>{"p", "q"}));
  std::size_t checked = 0;
  for (int v = 0; v < 3; ++v) {
    const auto& sets = file["nodes"][v]["sets"];
    ASSERT_EQ(sets.size(), expected.num_parent_sets(v));
    for (const auto& entry : sets) {
      ParentMask global = 0;
      for (int u : entry[0]) global |= ParentMask{1} << u;
      EXPECT_EQ(entry[1].get<double>(), expected.log_score_global(v, global));  // exact bits
      ++checked;
    }
  }
  EXPECT_EQ(checked, 9u);
}

// Runs an R expression with Rscript; false when Rscript is not installed.
bool run_r(const std::string& expression) {
  const std::string rscript = COVEY_RSCRIPT;
  if (rscript.empty()) return false;
  const auto r = testing_util::run_shell(rscript + " -e '" + expression + "'");
  if (r.exit_code != 0) throw std::runtime_error("Rscript failed: " + r.err);
  return true;
}

// Gaussian columns are standardized by default: a column given in other units (x -> 1000 x + 7)
// leaves the written scores unchanged; --raw-units keeps the units, and then they change.
TEST_F(ScoreCli, UnitsDoNotChangeTheScoresUnlessRawUnits) {
  std::string plain = "a,b,c\n", scaled = "a,b,c\n";
  const double rows[][3] = {{1.5, 2, 3},   {0.5, 1, -2}, {2, 0.25, 1},  {3, 1, 0},
                            {2.5, 3, 1.5}, {1, 0.5, 2},  {0.2, 1.5, -1}};
  for (const auto& row : rows) {
    plain += format_row(row[0], row[1], row[2]);
    scaled += format_row(row[0], 1000 * row[1] + 7, row[2]);
  }
  write_file(path("plain.csv"), plain);
  write_file(path("scaled.csv"), scaled);
  auto scores = [&](const std::string& csv, const std::string& extra) {
    const std::string out = path(csv + std::to_string(extra.size()) + ".tsv");
    const auto r = run_covey("score " + path(csv) + " -o " + out + extra);
    EXPECT_EQ(r.exit_code, 0) << r.err;
    EXPECT_NE(r.out.find(extra.empty() ? "standardized to mean 0" : "raw units"), std::string::npos)
        << r.out;
    return read_scores_tsv(out);
  };
  auto largest_difference = [](const ScoreTable& x, const ScoreTable& y) {
    double worst = 0;
    for (int v = 0; v < 3; ++v)
      for (std::size_t i = 0; i < x.num_parent_sets(v); ++i)
        worst = std::max(worst, std::abs(x.log_scores(v)[i] - y.log_scores(v)[i]));
    return worst;
  };
  EXPECT_LT(largest_difference(scores("plain.csv", ""), scores("scaled.csv", "")), 1e-9);
  EXPECT_GT(
      largest_difference(scores("plain.csv", " --raw-units"), scores("scaled.csv", " --raw-units")),
      1e-3);
  ASSERT_EQ(run_covey("score " + path("plain.csv") + " -o " + path("plain.h5")).exit_code, 0);
  const auto info = run_covey("info " + path("plain.h5"));
  EXPECT_NE(info.out.find("units: standardized"), std::string::npos) << info.out;
  EXPECT_NE(run_covey("score " + path("good.csv") + " -o " + path("x.h5") + " --raw-units")
                .err.find("--raw-units applies to Gaussian data"),
            std::string::npos);
}

// A mixed table as R writes it: MASS::birthwt (row names, 0/1 columns, counts, measurements).
// Read as is it is all numbers (Gaussian), with a note on each 0/1 column; with the 0/1 and count
// columns named discrete and the measurements binned it is a discrete table. Independent checks
// from R: the quantile edges of age are R's quantile(type = 1), and bwt cut at 2499 is R's own
// `low` (bwt < 2500 g).
TEST_F(ScoreCli, BirthwtFromRBecomesADiscreteTable) {
  const std::string csv = path("birthwt.csv"), edges = path("age_edges.txt");
  if (!run_r("write.csv(MASS::birthwt, \"" + csv + "\"); writeLines(format(quantile(" +
             "MASS::birthwt$age, c(1, 2) / 3, type = 1, names = FALSE)), \"" + edges + "\")"))
    GTEST_SKIP() << "Rscript is not installed";
  const auto as_is = run_covey("score " + csv + " -o " + path("bw_gauss.h5"));
  ASSERT_EQ(as_is.exit_code, 0) << as_is.err;
  EXPECT_NE(as_is.err.find("row names"), std::string::npos) << as_is.err;
  for (const char* column : {"low", "smoke", "ht", "ui"})
    EXPECT_NE(as_is.err.find(std::string("column '") + column + "' holds only 0 and 1"),
              std::string::npos)
        << column << "\n"
        << as_is.err;

  const std::string options =
      " --discrete-columns low,race,smoke,ptl,ht,ui,ftv --bin age=quantile:3 "
      "--bin lwt=quantile:3 --bin bwt=edges:2499";
  const auto r = run_covey("score " + csv + " -o " + path("bw.h5") + options + " --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto summary = nlohmann::json::parse(r.out);
  EXPECT_EQ(summary["score"], "bdeu");
  EXPECT_EQ(summary["rows"], 189);
  ASSERT_EQ(summary["columns"].size(), 10u);  // the row-name column is gone
  std::string age_edges = testing_util::read_file(edges);
  for (char& c : age_edges)
    if (c == '\n') c = ',';
  age_edges.erase(age_edges.find_last_not_of(", ") + 1);
  for (const auto& column : summary["columns"]) {
    EXPECT_EQ(column["kind"], "discrete");
    if (column["name"] == "age") {
      EXPECT_EQ(column["became"], "numbers, cut into 3 quantile bins at edges " + age_edges);
    }
    if (column["name"] == "race") {
      EXPECT_EQ(column["became"], "labels (--discrete-columns)");
    }
  }
  CsvOptions csv_options;
  csv_options.discrete_columns = {"low"};
  csv_options.bins = {parse_bin_spec("bwt=edges:2499")};
  csv_options.kind = ColumnKindChoice::kDiscrete;
  const DataTable table = read_csv(csv, csv_options);
  const int low = find_variable(table.variables(), "low", "test");
  const int bwt = find_variable(table.variables(), "bwt", "test");
  EXPECT_EQ(table.variables()[bwt].levels, (std::vector<std::string>{"<=2499", ">2499"}));
  for (std::size_t i = 0; i < table.num_rows(); ++i)
    EXPECT_EQ(table.codes(bwt)[i], 1 - table.codes(low)[i]) << "row " << i;

  // Without the bins, the measurements stay Gaussian: a mixed table, scored by the
  // conditional-Gaussian score, in which no measurement is a parent of a discrete column.
  const auto mixed = run_covey("score " + csv + " -o " + path("bw_cg.tsv") +
                               " --discrete-columns low,race,smoke,ptl,ht,ui,ftv");
  ASSERT_EQ(mixed.exit_code, 0) << mixed.err;
  EXPECT_NE(mixed.out.find("cg scores"), std::string::npos) << mixed.out;
  EXPECT_NE(mixed.err.find("a mixed table: Gaussian columns 'age', 'lwt', 'bwt'"),
            std::string::npos)
      << mixed.err;
  const ScoreTable cg = read_scores_tsv(path("bw_cg.tsv"));
  const int low_node = find_variable(cg.variables(), "low", "test");
  for (int u : cg.candidates(low_node))
    EXPECT_NE(cg.variables()[u].name, "bwt");  // bwt never a parent of low

  const auto info = run_covey("info " + path("bw.h5"));
  EXPECT_NE(info.out.find("bwt\tdiscrete\t2\t9\t130\tnumbers, cut into 2 bins at edges 2499"),
            std::string::npos)
      << info.out;
}

// An aggregated table (R's esoph in long form: one row per cell and case status, with its count)
// (200 cases, 775 controls in R >= 4.0) scores as the table with each row repeated count times
// (R's rep()).
TEST_F(ScoreCli, CountColumnEqualsRepeatedRows) {
  const std::string counted = path("esoph.csv"), repeated = path("esoph_long.csv");
  if (!run_r("e <- esoph; d <- rbind(data.frame(e[, 1:3], case = \"yes\", n = e$ncases), "
             "data.frame(e[, 1:3], case = \"no\", n = e$ncontrols)); write.csv(d, \"" +
             counted + "\", row.names = FALSE); write.csv(d[rep(seq_len(nrow(d)), d$n), 1:4], \"" +
             repeated + "\")"))
    GTEST_SKIP() << "Rscript is not installed";
  const auto a = run_covey("score " + counted + " --count-column n -o " + path("a.tsv"));
  ASSERT_EQ(a.exit_code, 0) << a.err;
  EXPECT_NE(a.err.find("rows stand for 975 observations"), std::string::npos) << a.err;
  ASSERT_EQ(run_covey("score " + repeated + " -o " + path("b.tsv")).exit_code, 0);
  const ScoreTable x = read_scores_tsv(path("a.tsv")), y = read_scores_tsv(path("b.tsv"));
  ASSERT_EQ(x.num_variables(), 4);
  for (int v = 0; v < 4; ++v)
    for (std::size_t i = 0; i < x.num_parent_sets(v); ++i)
      EXPECT_NEAR(x.log_scores(v)[i], y.log_scores(v)[i], 1e-9 * std::abs(y.log_scores(v)[i]));
}

}  // namespace
}  // namespace covey
