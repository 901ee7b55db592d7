#pragma once
// Shared helpers for the tests: temporary folders, random score tables, running the CLI.
#include <cstdint>
#include <string>
#include <vector>

#include "covey/score_table.hpp"

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
// drawn as Normal(0, 1.2) - 0.5*|S| from a fixed seed (the shape of DESIGN's reference model).
ScoreTable random_full_table(int n, int max_indegree, std::uint64_t seed);
// A table holding every parent set with log score 0 (all DAG weights 1: counts DAGs).
ScoreTable unit_table(int n, int max_indegree);

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

}  // namespace covey::testing_util
