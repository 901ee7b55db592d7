#pragma once
// The highest-scoring DAG of the cover-bounded class D_k (docs/mathematics.md section 3): the
// optimization shown polynomial in n for fixed k in 2015, by a dynamic program over every cover
// set C with |C| = k and every order of C. Only parent sets in the table are used, so in-degree
// bounds and forbidden or required edges hold.
#include <cstdint>

#include "covey/graph/cover_class.hpp"
#include "covey/graph/dag.hpp"
#include "covey/scores/score_table.hpp"

namespace covey {

struct CoverBestResult {
  Dag dag;
  double log_score = 0;  // log w(dag), summed in vertex order
  VertexList cover;      // a minimum vertex cover of the moral graph (size <= k), ascending
};

// Throws InputError (naming `option`) unless 0 <= k < n and k is at most the engines' bound.
void check_cover_bound(const ScoreTable& table, int k, const char* option = "{k}");

// The best DAG of D_k, parallel over cover sets (TBB). Ties go to the first cover set (ascending
// index lists) and order in a fixed enumeration, so the result does not depend on the thread
// count. Throws InputError when no DAG of D_k uses only parent sets of the table.
CoverBestResult best_dag_in_cover_class(const ScoreTable& table, int k);

}  // namespace covey
