#pragma once
// Background knowledge on edges: forbidden edges (never in any DAG) and required edges (in every
// DAG). Both are expressed in a score table by which parent sets it holds: a forbidden parent is
// never a candidate; a required parent is in every allowed parent set of its child.
//
// File format (docs/file-formats.md): one edge per line, `from<TAB>to` with variable names; '#'
// lines and blank lines are ignored.
#include <string>
#include <vector>

#include "covey/data/variables.hpp"

namespace covey {

struct Edge {
  int from;
  int to;
  std::string origin;  // "FILE:LINE" the edge was read from (for messages)
};

struct EdgeConstraints {
  std::vector<Edge> forbidden;
  std::vector<Edge> required;
  bool empty() const { return forbidden.empty() && required.empty(); }
};

// Reads one edge file. Throws InputError naming the file and line for malformed lines, unknown
// names and self-loops. Repeated edges are kept once.
std::vector<Edge> read_edge_file(const std::string& path, const std::vector<Variable>& variables);

// Reads the files (an empty path means none) and checks them together: a required edge may not
// be forbidden, and the required edges may not form a directed cycle.
EdgeConstraints read_edge_constraints(const std::string& forbid_path,
                                      const std::string& require_path,
                                      const std::vector<Variable>& variables);
// The joint checks alone (for constraints built in code).
void check_edge_constraints(const EdgeConstraints& constraints,
                            const std::vector<Variable>& variables);

}  // namespace covey
