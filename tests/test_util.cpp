#include "test_util.hpp"

#include <unistd.h>

#include <array>
#include <boost/random/normal_distribution.hpp>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <sys/wait.h>

#include "covey/random.hpp"

namespace covey::testing_util {

TempDir::TempDir() {
  std::string templ = (std::filesystem::temp_directory_path() / "covey-test-XXXXXX").string();
  if (!::mkdtemp(templ.data())) throw std::runtime_error("mkdtemp failed");
  path_ = templ;
}

TempDir::~TempDir() {
  std::error_code ec;
  std::filesystem::remove_all(path_, ec);
}

namespace {
ScoreTable full_table(int n, int max_indegree, std::uint64_t seed, bool unit) {
  Rng rng = make_stream(seed, 0);
  boost::random::normal_distribution<double> normal(0.0, 1.2);
  std::vector<Variable> vars;
  for (int v = 0; v < n; ++v) vars.push_back({"X" + std::to_string(v), VariableKind::kDiscrete, {}});
  std::vector<NodeScores> nodes(n);
  for (int v = 0; v < n; ++v) {
    for (int u = 0; u < n; ++u)
      if (u != v) nodes[v].candidates.push_back(u);
    const int c = n - 1;
    for (ParentMask m = 0; m < (ParentMask{1} << c); ++m) {
      const int size = __builtin_popcountll(m);
      if (size > max_indegree) continue;
      nodes[v].masks.push_back(m);
      nodes[v].log_scores.push_back(unit ? 0.0 : normal(rng) - 0.5 * size);
    }
  }
  return ScoreTable(std::move(vars), std::move(nodes));
}
}  // namespace

ScoreTable random_full_table(int n, int max_indegree, std::uint64_t seed) {
  return full_table(n, max_indegree, seed, false);
}

ScoreTable unit_table(int n, int max_indegree) { return full_table(n, max_indegree, 0, true); }

std::string read_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

CommandResult run_shell(const std::string& command) {
  TempDir dir;
  const std::string out = dir.file("out"), err = dir.file("err");
  const std::string full = "(" + command + ") >" + out + " 2>" + err + " </dev/null";
  const int status = std::system(full.c_str());
  const int code = WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
  return {code, read_file(out), read_file(err)};
}

CommandResult run_covey(const std::string& args) {
  return run_shell(std::string(COVEY_BINARY) + " " + args);
}

}  // namespace covey::testing_util
