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

// Where one unit's tables sit in the arena (offsets in long doubles). S = 4^m states (T, N),
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
  std::uint64_t cover = 0;
  std::size_t offset = 0;
  double log_weight = -INFINITY;
  std::uint8_t m = 0;
  std::array<std::int8_t, kMaxCoverBound> order{};   // position -> member index (C-local)
  std::array<std::int8_t, kMaxCoverBound> vertex{};  // position -> vertex
  std::array<std::uint16_t, kMaxCoverBound> need{};  // positions one H-parent must come from
  void set(const int* order_members, const std::vector<int>& members);
  std::uint64_t global(unsigned sigma_local) const;
};

struct SamplerData {
  int n = 0, k = 0;
  std::uint64_t fingerprint = 0;
  std::vector<std::uint64_t> covers;          // all C with |C| <= k, by size then index list
  std::vector<std::size_t> cover_first_unit;  // units of cover c: [first[c], first[c+1])
  std::vector<UnitGeometry> units;
  std::size_t arena_size = 0;
  std::vector<long double> arena;
  double log_u = -INFINITY;
  std::vector<double> alias_prob;
  std::vector<std::size_t> alias_index;

  static double unit_bytes(int m, int num_outside);
  void layout_units();  // covers, units and offsets (no tables)
  void finish();        // U and the alias table; throws when U = 0
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
