#pragma once
// Internal to the exact cover-bounded sampler: the tables of the sampling units and the draw.
#include <array>
#include <cstdint>
#include <vector>

#include "cover_local.hpp"
#include "covey/core/random.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "covey/graph/dag.hpp"

namespace covey::detail {

// The tables' number type. Every factor is exp(score - scale) <= 1 with a per-vertex scale of its
// cover set, and the forward tables are renormalised to max 1 after each outside vertex, so
// double's range holds them; SamplerData::finish() refuses a table whose weights would need
// more (docs/mathematics.md, "Exact sampler on D_k: number range"). Half the bytes and several
// times the speed of the x87 long double used before.
using Real = double;

// Where one unit's tables sit in the arena (offsets in Reals). S = 4^m states (T, N),
// P = 2^m subsets of C; masks are "sigma-local": bit t = the member at position t of the order.
struct UnitLayout {
  std::size_t forward;      // F_0..F_no, S each: forward weights after each outside vertex
  std::size_t link;         // H[i][A][Z], P*P per outside vertex: link transitions
  std::size_t leaf;         // f_u(P), P per outside vertex
  std::size_t link_parent;  // f_c(Q + u) per (outside vertex, position), P each (Q before c)
  std::size_t inner;        // f_c(Q) per position, with the order constraint applied
  std::size_t final;        // R[T, N]: weight of the non-link members' sets completing the cover
  std::size_t step_scale;   // per outside vertex: the factor F_{i+1} was divided by
  std::size_t total;
  static UnitLayout of(int m, int num_outside);
};

std::size_t factorial(int m);

struct UnitGeometry {
  std::size_t cover = 0;  // index into SamplerData::covers
  std::size_t offset = 0;
  double log_weight = -INFINITY;
  std::uint8_t m = 0;
  std::array<std::int8_t, kMaxCoverBound> order{};    // position -> member index (C-local)
  std::array<std::int32_t, kMaxCoverBound> vertex{};  // position -> vertex
  std::array<std::uint16_t, kMaxCoverBound> need{};   // positions one H-parent must come from
  void set(const int* order_members, const std::vector<int>& members);
  // Adds the edges vertex[t] -> child for the positions t in `sigma_local`.
  void add_parents(Dag& dag, int child, unsigned sigma_local) const;
};

// Bytes held per unit besides its tables: the geometry, the alias table and the vectors that
// building, saving and loading hold per unit at their peak.
inline constexpr double kUnitOverheadBytes = sizeof(UnitGeometry) + 48.0;

// Checks (require_memory) that the tables for n variables and bound k fit under `limit`: the
// peak of building, saving and loading alike (0: default_memory_limit()).
void require_sampler_memory(int n, int k, std::size_t limit);

struct SamplerData {
  int n = 0, k = 0;
  std::uint64_t fingerprint = 0;
  std::vector<VertexList> covers;             // all C with |C| <= k, by size then index list
  std::vector<std::size_t> cover_first_unit;  // units of cover c: [first[c], first[c+1])
  std::vector<UnitGeometry> units;
  std::size_t arena_size = 0;
  std::vector<Real> arena;
  // While building: per unit, log of an upper bound on the weight the double tables may have
  // dropped below their smallest normal number (checked against U by finish()).
  std::vector<double> log_dropped_bound;
  double log_u = -INFINITY;
  std::vector<double> alias_prob;
  std::vector<std::size_t> alias_index;

  static double unit_bytes(int m, int num_outside);
  void layout_units();        // covers, units and offsets (no tables)
  void finish();              // U and the alias table; throws when U = 0
  void check_number_range();  // throws when the double tables may have lost weight
  void build_alias();
  std::size_t pick_unit(Rng& rng) const {
    const std::size_t i = static_cast<std::size_t>(uniform_below(rng, alias_prob.size()));
    return uniform01(rng) < alias_prob[i] ? i : alias_index[i];
  }
  Dag draw_in_unit(std::size_t unit, Rng& rng) const;
};

}  // namespace covey::detail

namespace covey {
struct CoverSampler::Impl : detail::SamplerData {};
}  // namespace covey
