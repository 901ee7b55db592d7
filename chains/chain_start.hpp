#pragma once
// Start states of chains (docs/chains.md, "Starts"). Private to chains/.
#include <cstdint>
#include <vector>

#include "covey/chains/structure_chain.hpp"
#include "covey/core/random.hpp"
#include "covey/scores/score_table.hpp"

namespace covey {

// A randomized greedy start: a uniformly random order of the nodes (from `rng`), then for each
// node its best allowed parent set among the nodes before it -- the best DAG consistent with
// the order. Different streams give different orders, so chains start dispersed, each near a
// mode. As global parent words (n * ceil(n/64), node-major). Throws InputError when no tried
// order admits a DAG of the table (required edges can rule most orders out).
// With a `restriction` (the class of a cover limit) each node takes the best of its sets that
// keeps the graph so far inside the class; the empty set always does (removing edges keeps a
// moral-graph cover a cover), so the result lies in the class.
std::vector<std::uint64_t> greedy_start(const ScoreTable& table, Rng& rng,
                                        const DagClass* restriction = nullptr);

}  // namespace covey
