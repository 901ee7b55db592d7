#pragma once
// Draws of named quantities from a CSV file, for `covey check --draws`.
//
// Layout: a header line naming the columns, one of them `chain` and one `iteration` (integers;
// or `.chain` and `.iteration`, R's posterior's names, with an optional `.draw` that is skipped),
// every other column one quantity (finite numbers); then one row per draw. Fields may be
// double-quoted (as R's write.csv writes them). Draws of a chain are ordered by iteration
// number; chains by their label. All chains must have the same number of draws, at least
// kMinDrawsPerChain.
#include <string>
#include <vector>

#include "covey/diagnostics/diagnostics.hpp"

namespace covey {

struct DrawsTable {
  std::vector<std::string> names;       // quantity columns, in file order
  std::vector<long long> chain_labels;  // ascending
  int chains = 0;
  int iterations = 0;
  std::vector<std::vector<double>> columns;  // per quantity, chain-major

  DrawsView quantity(std::size_t q) const { return {columns[q], chains, iterations}; }
};

// Throws InputError naming the file (and the line, where one is at fault).
DrawsTable read_draws_csv(const std::string& path);

}  // namespace covey
