#pragma once
// Shared helpers for the tests: temporary folders, random score tables, running the CLI.
#include <cstdint>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "covey/data/data.hpp"
#include "covey/graph/dag.hpp"
#include "covey/scores/score_table.hpp"

namespace covey::testing_util {

// A fresh temporary folder, removed with its contents on destruction.
class TempDir {
 public:
  TempDir();
  ~TempDir();
  const std::string& path() const { return path_; }
  std::string file(const std::string& name) const { return path_ + "/" + name; }

 private:
  std::string path_;
};

// A table over n variables holding every parent set of size <= max_indegree, with log scores
// drawn as Normal(0, 1.2) - 0.5*|S| from a fixed seed (a common shape for sparse local scores).
ScoreTable random_full_table(int n, int max_indegree, std::uint64_t seed);
// random_full_table(n, 3, seed) with 4 |S| added to every log score: the posterior sits on dense
// DAGs, so small cover-bounded classes (D_1) hold a tiny share of its mass.
ScoreTable dense_full_table(int n, std::uint64_t seed);
// A table holding every parent set with log score 0 (all DAG weights 1: counts DAGs).
ScoreTable unit_table(int n, int max_indegree);

// Data sampled from a random Bayesian network (node v has up to 2 parents among 0..v-1, random
// conditional tables / linear Gaussian equations), so that the columns really depend on each other.
DataTable random_discrete_data(int n, std::size_t rows, int levels, std::uint64_t seed);
DataTable random_gaussian_data(int n, std::size_t rows, std::uint64_t seed);

// A key equal for two DAGs exactly when they are Markov equivalent: the skeleton and the
// v-structures (Verma & Pearl 1990).
std::string markov_equivalence_key(const Dag& dag);
// A random DAG on n nodes with at most max_indegree parents per node.
Dag random_dag(int n, int max_indegree, std::uint64_t seed);

struct CommandResult {
  int exit_code;
  std::string out;  // stdout
  std::string err;  // stderr
};
// Runs the covey binary with the given argument string (passed to /bin/sh).
CommandResult run_covey(const std::string& args);
// Runs any shell command.
CommandResult run_shell(const std::string& command);
std::string read_file(const std::string& path);
void write_file(const std::string& path, const std::string& text);

// Runs tests/reference/<script> with COVEY_REFERENCE_PYTHON (Debian's python3 with SciPy/h5py)
// and the given arguments; parses its stdout as JSON. Fails the test (throws) on a non-zero exit.
nlohmann::json run_reference_python(const std::string& script, const std::string& args);
// Writes a data set of R's `datasets` package as CSV with COVEY_RSCRIPT: `expression` is R code
// whose value is a data frame (e.g. "swiss"); written with write.csv(row.names = FALSE).
void write_r_dataset_csv(const std::string& expression, const std::string& path);

}  // namespace covey::testing_util
