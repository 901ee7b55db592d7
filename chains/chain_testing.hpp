#pragma once
// Deliberate faults of a chain, for the tests only (private to the chains layer: no option, no
// run-file field and no public header carries them). The statistical tests run a chain with
// one of these faults to show that their checks fail on a wrong sampler (DEVELOPERS.md, "Tests").
#include "covey/chains/structure_chain.hpp"

namespace covey {

// A deliberately wrong block move: paths through the nodes outside the block ignored when
// deriving g (R(o) taken empty: draws may close cycles through them), or each parent set drawn
// uniformly among those with the drawn block parent set instead of by f_v.
enum class BlockFault { kNone, kIgnoreOutsidePaths, kUniformWithinBlockParentSet };

struct ChainFaults {
  // Bit m set makes move m accept with the bare weight ratio min(1, w(G')/w(G)), dropping its
  // Hastings factor (for teleports also the 1[G in D_k] factor): the chain then targets the
  // wrong distribution.
  unsigned drop_hastings = 0;
  BlockFault block = BlockFault::kNone;
  // Local moves decided on the exact scores alone, without the screen (which gives the
  // same trajectory; the tests and the benchmark compare the two). Not a fault of the target.
  bool exact_local_moves = false;
  // Rejection skipping with events that take a uniform local-move slot instead of one drawn by
  // its bound b_s, and accept it whenever it is valid (the score ratio ignored).
  bool skip_uniform_events = false;
};

// The block fault of a chain's faults (none without faults).
inline BlockFault block_fault_of(const ChainFaults* faults) {
  return faults ? faults->block : BlockFault::kNone;
}

// A chain with `faults` (a ChainFaults{} gives the chain StructureChain(table, config) makes).
StructureChain make_faulty_chain(const ScoreTable& table, const ChainConfig& config,
                                 const ChainFaults& faults);

}  // namespace covey
