#pragma once
// Files of DAG draws, one HDF5 layout for every engine that draws DAGs (exact draws over all
// DAGs, cover-bounded draws, ...), read back by `compare` and by users (docs/file-formats.md,
// "Exact draws"):
//   /                  attributes: format "covey-draws", format_version, kind, num_variables,
//                      num_draws, table_fingerprint (16 hex digits), covey_version,
//                      command_line, every scalar engine attribute, and `attributes` (all of
//                      them as one JSON text, for an exact round trip)
//   /variables/names   variable names, in table order
//   /draws/parents     uint64 [num_draws, num_variables * W], W = ceil(n / 64): words v*W..v*W+W-1
//                      of row i = the parent set of v (n <= 64: word v = parent mask of v)
//   /draws/log_weight  float64 [num_draws]: log w(G) of each draw under the table
#include <cstdint>
#include <string>
#include <vector>

#include "covey/core/attributes.hpp"
#include "covey/graph/dag.hpp"
#include "covey/scores/score_table.hpp"

namespace covey {

struct DrawsFile {
  std::string kind;  // "exact-draws", "cover-draws", ...
  std::vector<std::string> variables;
  std::uint64_t table_fingerprint = 0;
  std::vector<Dag> dags;
  std::vector<double> log_weights;
  Attributes attributes;  // as given to write_draws
};

// Writes the draws atomically (an existing file is replaced only by a complete new one).
// `attributes` must hold a string "kind"; "command_line" and "covey_version" are stored as
// given (covey_version defaults to this build's version).
void write_draws(const std::string& path, const ScoreTable& table, const std::vector<Dag>& dags,
                 const std::vector<double>& log_weights, const Attributes& attributes);
// The same, for draws whose table is known only by its variable names and fingerprint.
void write_draws(const std::string& path, const std::vector<std::string>& variables,
                 std::uint64_t table_fingerprint, const std::vector<Dag>& dags,
                 const std::vector<double>& log_weights, const Attributes& attributes);

// Reads and validates a draws file (InputError naming the file when it is not one, is corrupt,
// or holds a graph with a cycle or a self-loop).
DrawsFile read_draws(const std::string& path);

// Throws InputError unless the draws were made from this table (fingerprint and names).
void check_draws_match_table(const DrawsFile& draws, const ScoreTable& table,
                             const std::string& path);

}  // namespace covey
