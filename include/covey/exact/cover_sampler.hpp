#pragma once
// Total weight and exact sampling on the cover-bounded class D_k (docs/mathematics.md section 4):
// the 2023 exact counting and sampling method, by rejection from the DAGs counted once per split.
//
// A split of G is a cover C of its moral graph with |C| <= k and no sink of G in C. This engine
// sums the split weights W(C, L) of one cover set C over all link sets L at once, by a dynamic
// program with positive terms only (no cancellation, so no split weight is ever clamped):
//
//  * With C fixed, every outside vertex u is a leaf (parents within C, no child) or a link
//    (parents within C, children a nonempty set A of members); each member has at most one link
//    parent, and every member needs a child.
//  * Cycles can only run through C. Contracting each link u (edges P_u -> A_u) gives a DAG H on
//    C; the program fixes sigma = the smallest topological order of H (by vertex index, the
//    greedy order), so every DAG is counted once: member sigma_j must then have an H-parent among
//    sigma_{i*}..sigma_{j-1}, where i* is the last earlier position holding a larger vertex.
//  * One pass over the outside vertices in index order with state (T, N): T = members that have
//    a link parent, N = members that already have a child. The members without a link choose
//    their parent sets at the end, and the members must all have a child: N and their sets
//    together cover C.
//
// A "sampling unit" is a pair (C, sigma) with its forward tables. U = sum of the unit weights
// = sum over G of m(G) w(G), m(G) = number of splits of G. A draw picks a unit in proportion to
// its weight (alias table, O(1)), walks its tables backwards (O(n 3^k 2^k) work, independent of
// the number of units), and is accepted iff C is G's canonical split (cover_class.hpp), so
// accepted DAGs follow w restricted to D_k exactly and the acceptance rate Z_k / U is >= 2^-k.
#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "covey/core/random.hpp"
#include "covey/graph/cover_class.hpp"
#include "covey/graph/dag.hpp"
#include "covey/scores/score_table.hpp"

namespace covey {

struct CoverSamplerOptions {
  std::size_t memory_limit_bytes = 0;  // 0: default_memory_limit()
  bool show_progress = true;           // progress line on stderr when it is a terminal
};

class CoverSampler {
 public:
  CoverSampler();
  ~CoverSampler();
  CoverSampler(CoverSampler&&) noexcept;
  CoverSampler& operator=(CoverSampler&&) noexcept;

  // Preprocessing, parallel over cover sets (TBB); the result does not depend on the thread
  // count. Throws InputError for a bad k (see check_cover_bound) or an empty class, and
  // ResourceError when the tables would exceed the memory limit (checked before allocating).
  static CoverSampler build(const ScoreTable& table, int k,
                            const CoverSamplerOptions& options = {});

  int cover_bound() const;
  int num_variables() const;
  // Candidate splits (C, L): cover sets |C| <= k and link sets L outside C with |L| <= |C|.
  std::size_t num_splits() const;
  std::size_t num_cover_sets() const;  // cover sets C with |C| <= k
  std::size_t num_units() const;       // (C, order) units, including those of weight 0
  double log_upper_bound() const;      // log U
  // Split weights clamped at 0. The positive route never produces a negative weight, so this is
  // 0; it is reported so that runs remain comparable with the signed formula.
  std::size_t clamped_splits() const;
  std::size_t memory_bytes() const;
  std::uint64_t table_fingerprint() const;
  // log of the total weight of the DAGs that have `cover` as a split (-inf when none).
  double log_cover_weight(const VertexList& cover) const;

  // One exact draw from w restricted to D_k (rejection inside); adds the trials used.
  Dag draw(Rng& rng, std::uint64_t* trials = nullptr) const;
  // One trial without the acceptance test: G with probability m(G) w(G) / U; `cover` receives
  // the split it came from. (draw() accepts it iff that split is canonical.)
  Dag draw_proposal(Rng& rng, VertexList* cover = nullptr) const;

  // HDF5, atomic; stores the table fingerprint. Holds no memory beyond the tables. An existing
  // `path` is refused unless `overwrite` (require_new_output).
  void save(const std::string& path, bool overwrite = false) const;
  // Checks the fingerprint, and the memory of the tables against options.memory_limit_bytes
  // before reading them (ResourceError as in build).
  static CoverSampler load(const std::string& path, const ScoreTable& table,
                           const CoverSamplerOptions& options = {});

  // Bytes that building, saving or loading the tables needs at its peak for n variables and
  // bound k (the tables, plus a few words per unit).
  static double estimate_memory_bytes(int n, int k);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// Number of candidate splits for n variables and bound k: sum over c <= k, l <= c of
// C(n, c) C(n - c, l).
double count_candidate_splits(int n, int k);

// log W(C, L) by the signed inclusion-exclusion formula of docs/mathematics.md section 4 (O(3^|K|)
// per split), an independent reference for the positive engine; sets *clamped when the sum came out
// negative and was clamped to 0.
double signed_split_log_weight(const ScoreTable& table, std::uint64_t cover, std::uint64_t links,
                               bool* clamped = nullptr);

}  // namespace covey
