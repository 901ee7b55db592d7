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

class ScoreCli : public ::testing::Test {
 protected:
  void SetUp() override {
    write_file(dir.file("good.csv"), "x,y,z\na,u,p\nb,u,q\na,v,q\nb,v,p\na,u,q\n");
    write_file(dir.file("gauss.csv"), "g1,g2,g3\n1.5,2,3\n0.5,1,-2\n2,0.25,1\n3,1,0\n");
    write_file(dir.file("mixed.csv"), "x,n\na,1\nb,2\n");
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
      {path("mixed.csv") + " -o " + out, "the table mixes kinds"},
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
  for (const auto& [args, fragment] : cases) {
    const auto r = run_covey("score " + args);
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
  EXPECT_EQ(run_covey("score " + good + " -o " + out + " --memory-limit 1K").exit_code, 3);
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

}  // namespace
}  // namespace covey
