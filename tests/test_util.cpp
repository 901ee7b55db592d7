#include "test_util.hpp"

#include <unistd.h>

#include <sys/wait.h>
#include <algorithm>
#include <array>
#include <bit>
#include <boost/random/normal_distribution.hpp>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "covey/core/random.hpp"

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
  for (int v = 0; v < n; ++v)
    vars.push_back({"X" + std::to_string(v), VariableKind::kDiscrete, {}});
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

ScoreTable dense_full_table(int n, std::uint64_t seed) {
  const ScoreTable base = random_full_table(n, 3, seed);
  std::vector<NodeScores> nodes(n);
  for (int v = 0; v < n; ++v) {
    const auto cands = base.candidates(v);
    nodes[v].candidates.assign(cands.begin(), cands.end());
    const auto masks = base.parent_sets(v);
    const auto scores = base.log_scores(v);
    for (std::size_t k = 0; k < masks.size(); ++k) {
      nodes[v].masks.push_back(masks[k]);
      nodes[v].log_scores.push_back(scores[k] + 4.0 * std::popcount(masks[k]));
    }
  }
  return ScoreTable(base.variables(), nodes);
}

ScoreTable unit_table(int n, int max_indegree) {
  return full_table(n, max_indegree, 0, true);
}

DataTable random_discrete_data(int n, std::size_t rows, int levels, std::uint64_t seed) {
  Rng rng = make_stream(seed, 1);
  std::vector<std::vector<int>> parents(n);
  std::vector<std::vector<double>> tables(n);
  for (int v = 0; v < n; ++v) {
    for (int k = 0; k < 2 && v > 0; ++k) {
      const int u = static_cast<int>(uniform_below(rng, v));
      if (std::find(parents[v].begin(), parents[v].end(), u) == parents[v].end())
        parents[v].push_back(u);
    }
    int configs = 1;
    for (std::size_t k = 0; k < parents[v].size(); ++k) configs *= levels;
    for (int j = 0; j < configs; ++j) {
      std::vector<double> w(levels);
      double sum = 0;
      for (double& x : w) sum += (x = 0.05 + uniform01(rng));
      for (double x : w) tables[v].push_back(x / sum);
    }
  }
  std::vector<std::vector<std::uint16_t>> codes(n, std::vector<std::uint16_t>(rows));
  for (std::size_t i = 0; i < rows; ++i) {
    for (int v = 0; v < n; ++v) {
      int j = 0;
      for (int u : parents[v]) j = j * levels + codes[u][i];
      double x = uniform01(rng);
      int k = 0;
      while (k + 1 < levels && x >= tables[v][j * levels + k]) x -= tables[v][j * levels + k++];
      codes[v][i] = static_cast<std::uint16_t>(k);
    }
  }
  std::vector<Variable> vars;
  for (int v = 0; v < n; ++v) {
    Variable var{"X" + std::to_string(v), VariableKind::kDiscrete, {}};
    for (int k = 0; k < levels; ++k) var.levels.push_back("s" + std::to_string(k));
    vars.push_back(std::move(var));
  }
  return DataTable::discrete(std::move(vars), std::move(codes));
}

DataTable random_gaussian_data(int n, std::size_t rows, std::uint64_t seed) {
  Rng rng = make_stream(seed, 2);
  boost::random::normal_distribution<double> normal(0.0, 1.0);
  std::vector<std::vector<std::pair<int, double>>> parents(n);
  for (int v = 1; v < n; ++v)
    for (int k = 0; k < 2; ++k)
      parents[v].push_back({static_cast<int>(uniform_below(rng, v)), normal(rng)});
  std::vector<std::vector<double>> values(n, std::vector<double>(rows));
  for (std::size_t i = 0; i < rows; ++i)
    for (int v = 0; v < n; ++v) {
      double x = 0.5 * v + normal(rng);
      for (const auto& [u, w] : parents[v]) x += w * values[u][i];
      values[v][i] = x;
    }
  std::vector<std::string> names;
  for (int v = 0; v < n; ++v) names.push_back("G" + std::to_string(v));
  return DataTable::gaussian(std::move(names), std::move(values));
}

std::string markov_equivalence_key(const Dag& dag) {
  const int n = dag.size();
  std::string key;
  for (int a = 0; a < n; ++a)
    for (int b = a + 1; b < n; ++b) key += (dag.has_edge(a, b) || dag.has_edge(b, a)) ? '1' : '0';
  key += '|';
  for (int c = 0; c < n; ++c)
    for (int a = 0; a < n; ++a)
      for (int b = a + 1; b < n; ++b)
        if (dag.has_edge(a, c) && dag.has_edge(b, c) && !dag.has_edge(a, b) && !dag.has_edge(b, a))
          key += std::to_string(a) + ">" + std::to_string(c) + "<" + std::to_string(b) + ";";
  return key;
}

Dag random_dag(int n, int max_indegree, std::uint64_t seed) {
  Rng rng = make_stream(seed, 3);
  std::vector<int> order(n);
  for (int i = 0; i < n; ++i) order[i] = i;
  for (int i = n - 1; i > 0; --i) std::swap(order[i], order[uniform_below(rng, i + 1)]);
  Dag dag(n);
  for (int i = 1; i < n; ++i)
    for (int j = 0; j < i; ++j)
      if (uniform01(rng) < 0.5 && std::popcount(dag.parent_mask(order[i])) < max_indegree)
        dag.add_edge(order[j], order[i]);
  return dag;
}

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

void write_file(const std::string& path, const std::string& text) {
  std::ofstream out(path, std::ios::binary);
  out << text;
  if (!out) throw std::runtime_error("cannot write " + path);
}

nlohmann::json run_reference_python(const std::string& script, const std::string& args) {
  const std::string python = COVEY_REFERENCE_PYTHON;
  if (python.empty()) throw std::runtime_error("COVEY_REFERENCE_PYTHON is not configured");
  const CommandResult r = run_shell(python + " " + std::string(COVEY_SOURCE_DIR) +
                                    "/tests/reference/" + script + " " + args);
  if (r.exit_code != 0)
    throw std::runtime_error(script + " failed (" + std::to_string(r.exit_code) + "): " + r.err);
  return nlohmann::json::parse(r.out);
}

void write_r_dataset_csv(const std::string& expression, const std::string& path) {
  const std::string rscript = COVEY_RSCRIPT;
  if (rscript.empty())
    throw std::runtime_error("COVEY_RSCRIPT is not configured (install r-base-core)");
  const CommandResult r = run_shell(rscript + " -e 'write.csv(" + expression + ", \"" + path +
                                    "\", row.names = FALSE)'");
  if (r.exit_code != 0) throw std::runtime_error("Rscript failed: " + r.err);
}

CommandResult run_covey(const std::string& args) {
  return run_shell(std::string(COVEY_BINARY) + " " + args);
}

}  // namespace covey::testing_util
