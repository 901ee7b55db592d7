// The in-unit draw of the exact cover-bounded sampler: a backward walk through one unit's
// forward tables (positive weights only), then the parent sets behind each chosen transition.
#include <bit>
#include <stdexcept>

#include "cover_sampler_impl.hpp"

namespace covey::detail {
namespace {

// Index i with probability w[i] / sum(w).
std::size_t pick_index(const Real* w, std::size_t count, Rng& rng) {
  Real total = 0;
  for (std::size_t i = 0; i < count; ++i) total += w[i];
  if (!(total > 0)) throw std::logic_error("cover sampler: a draw reached a state of weight 0");
  Real r = static_cast<Real>(uniform01(rng)) * total;
  std::size_t last_positive = 0;
  for (std::size_t i = 0; i < count; ++i) {
    if (w[i] <= 0) continue;
    last_positive = i;
    if (r < w[i]) return i;
    r -= w[i];
  }
  return last_positive;  // rounding left r at the very end
}

struct Scratch {
  std::vector<Real> weights, table;
  std::vector<unsigned> codes;
  std::vector<int> outside;
};
constexpr std::size_t kMaxSubsets = std::size_t{1} << kMaxCoverBound;

Scratch& scratch() {
  thread_local Scratch s;
  return s;
}

// Weight of giving the members at `positions` (each from `options(t)`: q -> weight, q within
// `within`) parent sets whose union contains `need`, for every need within `within`:
// table[idx * P + x] for the members idx.. and still-missing set x.
template <class Weight>
void cover_table(const int* positions, int count, unsigned within, unsigned P, Weight weight,
                 std::vector<Real>& table) {
  table.assign(std::size_t(count + 1) * P, Real(0));
  table[std::size_t(count) * P] = 1;
  for (int idx = count - 1; idx >= 0; --idx) {
    const int t = positions[idx];
    const unsigned pred = ((1U << t) - 1) & within;
    const Real* next = &table[std::size_t(idx + 1) * P];
    Real* cur = &table[std::size_t(idx) * P];
    for (unsigned x = within;; x = (x - 1) & within) {
      Real sum = 0;
      for (unsigned q = pred;; q = (q - 1) & pred) {
        const Real w = weight(t, q);
        if (w != 0) sum += w * next[x & ~q];
        if (q == 0) break;
      }
      cur[x] = sum;
      if (x == 0) break;
    }
  }
}

// Samples the sets for `positions` given the table above and the missing set `need`.
template <class Weight, class Apply>
void sample_cover(const int* positions, int count, unsigned within, unsigned P, Weight weight,
                  const std::vector<Real>& table, unsigned need, Rng& rng, Apply apply) {
  std::vector<Real>& w = scratch().weights;
  std::vector<unsigned>& codes = scratch().codes;
  for (int idx = 0; idx < count; ++idx) {
    const int t = positions[idx];
    const unsigned pred = ((1U << t) - 1) & within;
    const Real* next = &table[std::size_t(idx + 1) * P];
    w.clear();
    codes.clear();
    for (unsigned q = pred;; q = (q - 1) & pred) {
      const Real x = weight(t, q);
      if (x != 0) w.push_back(x * next[need & ~q]), codes.push_back(q);
      if (q == 0) break;
    }
    const unsigned q = codes[pick_index(w.data(), w.size(), rng)];
    apply(t, q);
    need &= ~q;
  }
}

}  // namespace

Dag SamplerData::draw_in_unit(std::size_t unit, Rng& rng) const {
  const UnitGeometry& g = units[unit];
  const int m = g.m;
  const unsigned P = 1U << m, full = P - 1;
  const std::size_t S = std::size_t{1} << (2 * m);
  Scratch& sc = scratch();
  complement(n, covers[g.cover], sc.outside);
  const std::vector<int>& outside = sc.outside;
  const int no = static_cast<int>(outside.size());
  const UnitLayout lay = UnitLayout::of(m, no);
  const Real* base = arena.data() + g.offset;
  const Real* F = base + lay.forward;
  const Real* H = base + lay.link;
  const Real* leaf = base + lay.leaf;
  const Real* link_parent = base + lay.link_parent;
  const Real* inner = base + lay.inner;
  const Real* R = base + lay.final;
  Dag dag(n);

  // The end state (T, N), weighted by the sets of the members without a link.
  sc.weights.resize(S);
  for (std::size_t s = 0; s < S; ++s) sc.weights[s] = F[no * S + s] * R[s];
  const std::size_t end = pick_index(sc.weights.data(), S, rng);
  unsigned T = end & full, N = static_cast<unsigned>(end >> m);
  {
    int positions[kMaxCoverBound];
    int count = 0;
    for (int t = 0; t < m; ++t)
      if (!((T >> t) & 1U)) positions[count++] = t;
    auto weight = [&](int t, unsigned q) { return inner[(t << m) | q]; };
    cover_table(positions, count, full, P, weight, sc.table);
    sample_cover(positions, count, full, P, weight, sc.table, full & ~N, rng,
                 [&](int t, unsigned q) { g.add_parents(dag, g.vertex[t], q); });
  }

  const Real* step_scale = base + lay.step_scale;
  for (int i = no - 1; i >= 0; --i) {
    const Real* prev = F + std::size_t(i) * S;
    const Real* lw = leaf + (std::size_t(i) << m);
    const int u = outside[i];
    // The predecessors of state (T, N): u is a leaf (a = 0) or a link to the members a within
    // T, adding the covered set z within N, from a covered set (N \ z) + x with x within z.
    // Their weights sum to F_{i+1}(T, N) times the factor it was divided by, so one scan in a
    // fixed order (leaves first, the usual case) can stop at the chosen option.
    const Real total = F[std::size_t(i + 1) * S + (T | (N << m))] * step_scale[i];
    Real r = static_cast<Real>(uniform01(rng)) * total;
    unsigned a = 0, z = 0, n_prev = 0;
    bool found = false, any = false;
    for (unsigned a_try = 0;;) {
      const Real* row = a_try == 0 ? lw : H + ((std::size_t(i) * P + a_try) << m);
      const unsigned t_prev = T & ~a_try;
      for (unsigned z_try = N;; z_try = (z_try - 1) & N) {
        const Real w = row[z_try];
        if (w != 0) {
          const unsigned fixed = N & ~z_try;
          for (unsigned x = z_try;; x = (x - 1) & z_try) {
            const Real option = w * prev[t_prev | ((fixed | x) << m)];
            if (option > 0) {
              a = a_try, z = z_try, n_prev = fixed | x, any = true;  // last positive so far
              if (r < option) {
                found = true;
                break;
              }
              r -= option;
            }
            if (x == 0) break;
          }
        }
        if (found || z_try == 0) break;
      }
      if (found) break;
      // next nonempty submask of T in increasing order
      a_try = (a_try - T) & T;
      if (a_try == 0) break;
    }
    // Rounding may leave r just past the last option: it is then the one taken.
    if (!any) throw std::logic_error("cover sampler: a draw reached a state of weight 0");
    const unsigned t_prev = T & ~a;

    if (a == 0) {
      g.add_parents(dag, u, z);
    } else {
      // The link's own parents pp (before the first member of a) and its children's sets,
      // together exactly z.
      int positions[kMaxCoverBound];
      int count = 0;
      for (unsigned r = a; r; r &= r - 1) positions[count++] = std::countr_zero(r);
      const unsigned pred_first = ((1U << positions[0]) - 1) & z;
      Real pw[kMaxSubsets];
      unsigned pcodes[kMaxSubsets];
      std::size_t options = 0;
      std::vector<Real>& table = sc.table;
      auto weight_for = [&](unsigned pp) {
        return [&, pp](int t, unsigned q) -> Real {
          if (g.need[t] && !((q | pp) & g.need[t])) return 0;
          return link_parent[((std::size_t(i) * m + t) << m) | q];
        };
      };
      for (unsigned pp = pred_first;; pp = (pp - 1) & pred_first) {
        if (lw[pp] != 0) {
          cover_table(positions, count, z, P, weight_for(pp), table);
          const Real x = lw[pp] * table[z & ~pp];
          if (x != 0) pw[options] = x, pcodes[options++] = pp;
        }
        if (pp == 0) break;
      }
      const unsigned pp = pcodes[pick_index(pw, options, rng)];
      g.add_parents(dag, u, pp);
      cover_table(positions, count, z, P, weight_for(pp), table);
      sample_cover(positions, count, z, P, weight_for(pp), table, z & ~pp, rng,
                   [&](int t, unsigned q) {
                     g.add_parents(dag, g.vertex[t], q);
                     dag.add_edge(u, g.vertex[t]);
                   });
    }
    T = t_prev;
    N = n_prev;
  }
  if (T != 0 || N != 0)
    throw std::logic_error("cover sampler: backward walk did not end at the start");
  return dag;
}

}  // namespace covey::detail
