#pragma once
// Full enumeration of DAGs for small n: the brute-force ground truth that every exact engine
// and every chain is tested against. Each DAG is generated exactly once by peeling sink layers:
// a DAG is a sequence of layers D0 (its sinks), D1 (the sinks of what remains), ..., where each
// vertex of D(i+1) is a parent of some vertex of D(i).
#include <cstdint>
#include <functional>

#include "covey/graph/dag.hpp"
#include "covey/scores/score_table.hpp"

namespace covey {

// allowed(v, parent_mask): whether v may have exactly this (global) parent set.
using ParentSetFilter = std::function<bool(int v, std::uint64_t parents)>;

// Calls visit(dag) once for every DAG on n <= 8 vertices whose parent sets all pass `allowed`.
// Returns the number of DAGs visited.
std::uint64_t for_each_dag(int n, const ParentSetFilter& allowed,
                           const std::function<void(const Dag&)>& visit);

// Every DAG whose parent sets are all in the table, with its log weight.
std::uint64_t for_each_dag(const ScoreTable& table,
                           const std::function<void(const Dag&, double log_weight)>& visit);

}  // namespace covey
