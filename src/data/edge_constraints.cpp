#include "covey/data/edge_constraints.hpp"

#include <fstream>
#include <map>
#include <set>
#include <unordered_map>

#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"

namespace covey {

std::vector<Edge> read_edge_file(const std::string& path, const std::vector<Variable>& variables) {
  require_readable(path);
  std::unordered_map<std::string, int> index;
  for (std::size_t i = 0; i < variables.size(); ++i) index.emplace(variables[i].name, int(i));
  std::ifstream in(path, std::ios::binary);
  std::vector<Edge> edges;
  std::set<std::pair<int, int>> seen;
  std::string line;
  long line_no = 0;
  while (std::getline(in, line)) {
    ++line_no;
    if (!line.empty() && line.back() == '\r') line.pop_back();
    if (line.empty() || line[0] == '#') continue;
    const std::string where = path + ":" + std::to_string(line_no);
    std::vector<std::string> fields;
    std::size_t start = 0;
    for (;;) {
      const std::size_t tab = line.find('\t', start);
      fields.push_back(line.substr(start, tab - start));
      if (tab == std::string::npos) break;
      start = tab + 1;
    }
    if (fields.size() != 2)
      throw InputError(where + ": expected 2 tab-separated fields (from, to), found " +
                       std::to_string(fields.size()));
    int ends[2];
    for (int k = 0; k < 2; ++k) {
      auto it = index.find(fields[k]);
      if (it == index.end()) throw InputError(where + ": unknown variable '" + fields[k] + "'");
      ends[k] = it->second;
    }
    if (ends[0] == ends[1])
      throw InputError(where + ": edge '" + fields[0] + "' -> '" + fields[1] + "' is a self-loop");
    if (seen.emplace(ends[0], ends[1]).second) edges.push_back({ends[0], ends[1], where});
  }
  return edges;
}

void check_edge_constraints(const EdgeConstraints& constraints,
                            const std::vector<Variable>& variables) {
  std::map<std::pair<int, int>, std::string> forbidden;
  for (const Edge& e : constraints.forbidden)
    forbidden.emplace(std::make_pair(e.from, e.to), e.origin);
  const int n = static_cast<int>(variables.size());
  std::vector<std::vector<int>> children(n);
  for (const Edge& e : constraints.required) {
    auto it = forbidden.find({e.from, e.to});
    if (it != forbidden.end())
      throw InputError(e.origin + ": required edge '" + variables[e.from].name + "' -> '" +
                       variables[e.to].name + "' is also forbidden (" + it->second + ")");
    children[e.from].push_back(e.to);
  }
  // A directed cycle among required edges leaves no DAG at all: find one by depth-first search.
  std::vector<int> state(n, 0), parent(n, -1);  // 0 new, 1 on the stack, 2 done
  for (int root = 0; root < n; ++root) {
    if (state[root]) continue;
    std::vector<std::pair<int, std::size_t>> stack{{root, 0}};
    state[root] = 1;
    while (!stack.empty()) {
      auto& [v, next] = stack.back();
      if (next == children[v].size()) {
        state[v] = 2;
        stack.pop_back();
        continue;
      }
      const int w = children[v][next++];
      if (state[w] == 1) {
        std::string cycle = variables[w].name;
        for (int x = v; x != w; x = parent[x]) cycle = variables[x].name + " -> " + cycle;
        throw InputError("the required edges form a directed cycle: " + variables[w].name + " -> " +
                         cycle);
      }
      if (state[w] == 0) {
        state[w] = 1;
        parent[w] = v;
        stack.push_back({w, 0});
      }
    }
  }
}

EdgeConstraints read_edge_constraints(const std::string& forbid_path,
                                      const std::string& require_path,
                                      const std::vector<Variable>& variables) {
  EdgeConstraints c;
  if (!forbid_path.empty()) c.forbidden = read_edge_file(forbid_path, variables);
  if (!require_path.empty()) c.required = read_edge_file(require_path, variables);
  check_edge_constraints(c, variables);
  return c;
}

}  // namespace covey
