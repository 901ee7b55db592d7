#pragma once
// Random score tables for the benchmarks: every parent set of size <= d of each node's
// candidates, with log scores Normal(0, sd) - penalty * |S| (a common shape for sparse
// local scores), from the given random stream.
#include "covey/core/random.hpp"
#include "covey/scores/score_table.hpp"

namespace covey::bench {

struct BenchTableShape {
  int n = 20;
  int candidates = -1;  // per node, drawn at random; -1: all other variables
  int max_indegree = 3;
  double sd = 1.2;
  double penalty = 0.5;
};

ScoreTable random_bench_table(const BenchTableShape& shape, Rng& rng);

}  // namespace covey::bench
