#include "covey/exact/cover_sampler.hpp"

#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>

#include <algorithm>
#include <array>
#include <bit>
#include <cmath>
#include <cstdio>
#include <limits>
#include <numeric>
#include <string>

#include "core/progress.hpp"
#include "cover_local.hpp"
#include "cover_sampler_impl.hpp"
#include "covey/core/error.hpp"
#include "covey/core/logmath.hpp"
#include "covey/core/memory.hpp"
#include "covey/exact/cover_best.hpp"
#include "covey/graph/cover_class.hpp"

namespace covey {
namespace detail {

UnitLayout UnitLayout::of(int m, int num_outside) {
  UnitLayout l;
  const std::size_t s = std::size_t{1} << (2 * m), p = std::size_t{1} << m;
  const std::size_t no = static_cast<std::size_t>(num_outside);
  l.forward = 0;
  l.link = l.forward + (no + 1) * s;
  l.leaf = l.link + no * p * p;
  l.link_parent = l.leaf + no * p;
  l.inner = l.link_parent + no * m * p;
  l.final = l.inner + m * p;
  l.step_scale = l.final + s;
  l.total = l.step_scale + no;
  return l;
}

std::size_t factorial(int m) {
  std::size_t f = 1;
  for (int i = 2; i <= m; ++i) f *= static_cast<std::size_t>(i);
  return f;
}

void UnitGeometry::set(const int* order_members, const std::vector<int>& members) {
  for (int t = 0; t < m; ++t) {
    order[t] = static_cast<std::int8_t>(order_members[t]);
    vertex[t] = members[order_members[t]];
  }
  // Position t must have an H-parent in [i*, t) when an earlier position i* holds a larger
  // vertex (the last such i*): then sigma is the greedy smallest topological order.
  for (int t = 0; t < m; ++t) {
    need[t] = 0;
    for (int i = t - 1; i >= 0; --i)
      if (vertex[i] > vertex[t]) {
        need[t] = static_cast<std::uint16_t>(((1U << t) - 1) & ~((1U << i) - 1));
        break;
      }
  }
}

void UnitGeometry::add_parents(Dag& dag, int child, unsigned sigma_local) const {
  for (unsigned s = sigma_local; s; s &= s - 1) dag.add_edge(vertex[std::countr_zero(s)], child);
}

namespace {

// log of an upper bound on the weight (in units of the cover set's scale product) that a unit's
// double tables can lose below DBL_MIN (docs/mathematics.md). A term dropped at step i is below
// DBL_MIN times that step's normalisation exp(log_norm[i]); each step has at most 2 S^2 such
// terms (and the tables behind them as many), and a term grows by at most the factor sums
// `log_step_sum[j]` of the later steps j (from any state, the options of outside vertex j weigh
// at most their sum) and then by the largest end weight.
double log_dropped_weight_bound(const std::vector<long double>& log_norm,
                                const std::vector<double>& log_step_sum, double log_max_end,
                                int m) {
  const int no = static_cast<int>(log_step_sum.size());
  const double log_terms = std::log(4.0) + 4 * m * std::log(2.0);
  long double worst = -INFINITY, later = std::max(0.0, log_max_end);
  for (int i = static_cast<int>(log_norm.size()) - 1; i >= 0; --i) {
    worst = std::max(worst, log_norm[i] + later);
    if (i > 0 && i - 1 < no) later += std::max(0.0, log_step_sum[i - 1]);
  }
  return static_cast<double>(worst) + std::log(std::numeric_limits<Real>::min()) + log_terms +
         std::log(double(no) + 2);
}

// Fills one unit's tables (see UnitLayout) and returns its log weight. `oscale`/`cscale` are the
// per-vertex log scales of this cover set (every factor below is exp(score - scale) <= 1).
// *log_dropped receives log_dropped_weight_bound for the largest normalisation the unit used.
double build_unit(const CoverLocalScores& local, const UnitGeometry& g,
                  const std::vector<double>& oscale, const std::vector<double>& cscale,
                  double log_scale_sum, Real* arena, double* log_dropped) {
  const int m = g.m, no = local.num_outside();
  const unsigned P = 1U << m, full = P - 1;
  const std::size_t S = std::size_t{1} << (2 * m);
  const UnitLayout lay = UnitLayout::of(m, no);
  std::vector<unsigned> perm(P);  // sigma-local mask -> C-local mask
  for (unsigned s = 0; s < P; ++s) {
    unsigned c = 0;
    for (unsigned t = s; t; t &= t - 1) c |= 1U << g.order[std::countr_zero(t)];
    perm[s] = c;
  }
  auto factor = [](double score, double scale) -> Real {
    return score == -INFINITY ? Real(0) : std::exp(score - scale);
  };
  Real* leaf = arena + lay.leaf;
  Real* link_parent = arena + lay.link_parent;
  Real* inner = arena + lay.inner;
  for (int i = 0; i < no; ++i)
    for (unsigned s = 0; s < P; ++s)
      leaf[(i << m) | s] = factor(local.leaf_score(i, perm[s]), oscale[i]);
  for (int t = 0; t < m; ++t) {
    const int j = g.order[t];
    const unsigned pred = (1U << t) - 1;
    for (unsigned q = 0; q <= pred; ++q) {
      // A member without a link parent must meet its order constraint by itself.
      const bool ok = g.need[t] == 0 || (q & g.need[t]);
      inner[(t << m) | q] = ok ? factor(local.inner_score(j, perm[q]), cscale[j]) : Real(0);
      for (int i = 0; i < no; ++i)
        link_parent[((std::size_t(i) * m + t) << m) | q] =
            factor(local.link_score(i, j, perm[q]), cscale[j]);
    }
  }

  // Link transitions H[i][A][Z]: outside vertex i links to the members A with parents P before
  // the first of A, and P together with the members' own sets Q is exactly Z.
  Real* link = arena + lay.link;
  std::vector<Real> vec(P), vec2(P);
  for (int i = 0; i < no; ++i) {
    for (unsigned a = 1; a <= full; ++a) {
      Real* row = link + ((std::size_t(i) * P + a) << m);
      const unsigned pred_first = (1U << std::countr_zero(a)) - 1;
      for (unsigned pp = pred_first;; pp = (pp - 1) & pred_first) {
        const Real w0 = leaf[(i << m) | pp];
        if (w0 != 0) {
          std::fill(vec.begin(), vec.end(), Real(0));
          vec[pp] = w0;
          for (unsigned rest = a; rest; rest &= rest - 1) {
            const int t = std::countr_zero(rest);
            const unsigned pred = (1U << t) - 1;
            std::fill(vec2.begin(), vec2.end(), Real(0));
            const Real* kw = link_parent + ((std::size_t(i) * m + t) << m);
            for (unsigned z = 0; z < P; ++z) {
              if (vec[z] == 0) continue;
              for (unsigned q = 0; q <= pred; ++q) {
                if (kw[q] == 0 || (q & ~pred)) continue;
                if (g.need[t] && !((q | pp) & g.need[t])) continue;
                vec2[z | q] += vec[z] * kw[q];
              }
            }
            vec.swap(vec2);
          }
          for (unsigned z = 0; z < P; ++z) row[z] += vec[z];
        }
        if (pp == 0) break;
      }
    }
  }

  // Forward pass over the outside vertices, rescaled to max 1 at every step.
  Real* F = arena + lay.forward;
  F[0] = 1;
  // The sum of each outside vertex's options bounds how much a forward weight grows per step.
  std::vector<double> log_step_sum(no);
  for (int i = 0; i < no; ++i) {
    Real sum = 0;
    for (unsigned pp = 0; pp < P; ++pp) sum += leaf[(i << m) | pp];
    const Real* rows = link + (std::size_t(i) * P << m);
    for (std::size_t x = 0; x < std::size_t{P} * P; ++x) sum += rows[x];
    log_step_sum[i] = std::log(sum);
  }
  std::vector<long double> log_norm(1, 0.0L);  // normalisation of F_0..F_i
  auto dropped_bound = [&](double log_max_end) {
    return log_scale_sum + log_dropped_weight_bound(log_norm, log_step_sum, log_max_end, m);
  };
  const double log_max_end = m * std::log(double(P));  // R <= (sum of P factors <= 1)^m
  *log_dropped = dropped_bound(log_max_end);
  long double log_scale = 0;
  for (int i = 0; i < no; ++i) {
    const Real* cur = F + i * S;
    Real* nxt = F + (i + 1) * S;
    const Real* lw = leaf + (i << m);
    for (std::size_t s = 0; s < S; ++s) {
      const Real v = cur[s];
      if (v == 0) continue;
      const unsigned T = s & full, N = static_cast<unsigned>(s >> m);
      for (unsigned pp = 0; pp < P; ++pp)
        if (lw[pp] != 0) nxt[T | ((N | pp) << m)] += v * lw[pp];
      const unsigned free = full & ~T;
      for (unsigned a = free; a; a = (a - 1) & free) {
        const Real* row = link + ((std::size_t(i) * P + a) << m);
        for (unsigned z = 0; z < P; ++z)
          if (row[z] != 0) nxt[(T | a) | ((N | z) << m)] += v * row[z];
      }
    }
    const Real top = *std::max_element(nxt, nxt + S);
    if (top == 0) {
      *log_dropped = dropped_bound(log_max_end);
      return -INFINITY;
    }
    arena[lay.step_scale + i] = top;
    const Real inv = 1 / top;
    for (std::size_t s = 0; s < S; ++s) nxt[s] *= inv;
    log_scale += std::log(static_cast<long double>(top));
    log_norm.push_back(log_scale);
  }

  // End: members without a link choose their sets; N and those sets must cover C.
  Real* R = arena + lay.final;
  for (unsigned T = 0; T <= full; ++T) {
    std::fill(vec.begin(), vec.end(), Real(0));
    vec[0] = 1;
    for (int t = 0; t < m; ++t) {
      if ((T >> t) & 1U) continue;
      std::fill(vec2.begin(), vec2.end(), Real(0));
      const unsigned pred = (1U << t) - 1;
      for (unsigned z = 0; z < P; ++z) {
        if (vec[z] == 0) continue;
        for (unsigned q = 0; q <= pred; ++q)
          if (inner[(t << m) | q] != 0) vec2[z | q] += vec[z] * inner[(t << m) | q];
      }
      vec.swap(vec2);
    }
    for (unsigned N = 0; N <= full; ++N) {
      const unsigned missing = full & ~N;
      Real sum = 0;
      for (unsigned z = 0; z < P; ++z)
        if ((z & missing) == missing) sum += vec[z];
      R[T | (N << m)] = sum;
    }
  }
  const Real* last = F + no * S;
  Real total = 0;
  for (std::size_t s = 0; s < S; ++s) total += last[s] * R[s];
  *log_dropped = dropped_bound(std::log(*std::max_element(R, R + S)));
  if (total == 0) return -INFINITY;
  return static_cast<double>(static_cast<long double>(log_scale_sum) + log_scale + std::log(total));
}

}  // namespace

double SamplerData::unit_bytes(int m, int num_outside) {
  return double(UnitLayout::of(m, num_outside).total) * sizeof(Real) + kUnitOverheadBytes;
}

void SamplerData::build_alias() {
  // Vose's alias method in a fixed order (deterministic).
  const std::size_t u = units.size();
  alias_prob.assign(u, 0.0);
  alias_index.assign(u, 0);
  std::vector<double> scaled(u);
  for (std::size_t i = 0; i < u; ++i)
    scaled[i] =
        units[i].log_weight == -INFINITY ? 0.0 : std::exp(units[i].log_weight - log_u) * double(u);
  std::vector<std::size_t> small, large;
  for (std::size_t i = u; i-- > 0;) (scaled[i] < 1.0 ? small : large).push_back(i);
  while (!small.empty() && !large.empty()) {
    const std::size_t s = small.back(), l = large.back();
    small.pop_back();
    alias_prob[s] = scaled[s];
    alias_index[s] = l;
    scaled[l] = (scaled[l] + scaled[s]) - 1.0;
    if (scaled[l] < 1.0) {
      large.pop_back();
      small.push_back(l);
    }
  }
  for (std::size_t i : large) alias_prob[i] = 1.0, alias_index[i] = i;
  // Left-overs from rounding: keep them only if they have weight.
  for (std::size_t i : small) {
    alias_prob[i] = 1.0;
    alias_index[i] = i;
    if (units[i].log_weight == -INFINITY) {
      // Never pick a unit of weight 0: send its column to the heaviest unit.
      std::size_t heaviest = 0;
      for (std::size_t j = 1; j < u; ++j)
        if (units[j].log_weight > units[heaviest].log_weight) heaviest = j;
      alias_prob[i] = 0.0;
      alias_index[i] = heaviest;
    }
  }
}

void SamplerData::finish() {
  LogSumAccumulator acc;
  for (const UnitGeometry& g : units) acc.add(g.log_weight);
  log_u = acc.value();
  if (log_u == -INFINITY)
    throw InputError("cover bound " + std::to_string(k) + ": no DAG whose moral graph has a " +
                     "vertex cover of size <= " + std::to_string(k) + " uses only parent sets " +
                     "of the table (required edges may need a larger cover); the total weight " +
                     "U is 0");
  check_number_range();
  build_alias();
}

void SamplerData::check_number_range() {
  // Built here (a loaded sampler was checked when it was built): the weight the double tables
  // may have dropped must be negligible against U.
  constexpr double kLogNegligible = -30;  // about 1e-13
  double worst = -INFINITY;
  for (double b : log_dropped_bound) worst = std::max(worst, b);
  log_dropped_bound.clear();
  log_dropped_bound.shrink_to_fit();
  if (worst == -INFINITY || worst - log_u < kLogNegligible) return;
  throw OptionError("cover bound " + std::to_string(k) +
                    ": the split weights of this score table span more than the exact sampler's "
                    "double-precision tables hold (log U = " +
                    std::to_string(log_u) + ", possible loss up to log " + std::to_string(worst) +
                    "); use a smaller {k}");
}

void require_sampler_memory(int n, int k, std::size_t limit) {
  require_memory(CoverSampler::estimate_memory_bytes(n, k), limit,
                 "the split tables of the exact sampler for cover bound " + std::to_string(k) +
                     " on " + std::to_string(n) + " variables",
                 "a smaller {k} shrinks them (or raise {memory_limit})");
}

void SamplerData::layout_units() {
  covers = detail::cover_sets(n, 0, k);
  units.clear();
  std::size_t offset = 0;
  cover_first_unit.assign(covers.size() + 1, 0);
  for (std::size_t c = 0; c < covers.size(); ++c) {
    cover_first_unit[c] = units.size();
    const int m = static_cast<int>(covers[c].size());
    const std::size_t size = UnitLayout::of(m, n - m).total;
    for (std::size_t o = 0; o < factorial(m); ++o) {
      UnitGeometry g;
      g.cover = c;
      g.m = static_cast<std::uint8_t>(m);
      g.offset = offset;
      offset += size;
      units.push_back(g);
    }
  }
  cover_first_unit[covers.size()] = units.size();
  arena_size = offset;
}

}  // namespace detail

using detail::SamplerData;
using detail::UnitGeometry;
using detail::UnitLayout;

CoverSampler::CoverSampler() = default;
CoverSampler::~CoverSampler() = default;
CoverSampler::CoverSampler(CoverSampler&&) noexcept = default;
CoverSampler& CoverSampler::operator=(CoverSampler&&) noexcept = default;

double CoverSampler::estimate_memory_bytes(int n, int k) {
  double bytes = 0, binom = 1;  // binom = C(n, m)
  for (int m = 0; m <= k && m <= n; ++m) {
    bytes += binom * double(detail::factorial(m)) * SamplerData::unit_bytes(m, n - m);
    binom = binom * double(n - m) / double(m + 1);
  }
  return bytes;
}

double count_candidate_splits(int n, int k) {
  double total = 0, bc = 1;  // bc = C(n, c)
  for (int c = 0; c <= k && c <= n; ++c) {
    double bl = 1, links = 0;  // bl = C(n - c, l)
    for (int l = 0; l <= c && l <= n - c; ++l) {
      links += bl;
      bl = bl * double(n - c - l) / double(l + 1);
    }
    total += bc * links;
    bc = bc * double(n - c) / double(c + 1);
  }
  return total;
}

CoverSampler CoverSampler::build(const ScoreTable& table, int k,
                                 const CoverSamplerOptions& options) {
  check_cover_bound(table, k);
  const int n = table.num_variables();
  detail::require_sampler_memory(n, k, options.memory_limit_bytes);
  CoverSampler sampler;
  sampler.impl_ = std::make_unique<Impl>();
  Impl& d = *sampler.impl_;
  d.n = n;
  d.k = k;
  d.fingerprint = table.fingerprint();
  d.layout_units();
  d.arena.assign(d.arena_size, 0.0);
  d.log_dropped_bound.assign(d.units.size(), -INFINITY);

  Progress progress("cover sampler: split tables",
                    options.show_progress && Progress::stderr_is_terminal());
  const std::size_t num_covers = d.covers.size();
  const std::size_t chunk = std::max<std::size_t>(64, num_covers / 100);
  for (std::size_t begin = 0; begin < num_covers; begin += chunk) {
    const std::size_t end = std::min(num_covers, begin + chunk);
    tbb::parallel_for(tbb::blocked_range<std::size_t>(begin, end), [&](const auto& range) {
      for (std::size_t c = range.begin(); c != range.end(); ++c) {
        const detail::CoverLocalScores local = detail::cover_local_scores(table, d.covers[c]);
        const int m = local.m, no = local.num_outside();
        const std::size_t P = std::size_t{1} << m;
        // Per-vertex scales: the best option of each vertex with this cover set.
        std::vector<double> oscale(no, -INFINITY), cscale(m, -INFINITY);
        for (int i = 0; i < no; ++i)
          for (std::size_t p = 0; p < P; ++p)
            oscale[i] = std::max(oscale[i], local.leaf_score(i, unsigned(p)));
        for (int j = 0; j < m; ++j)
          for (std::size_t q = 0; q < P; ++q) {
            cscale[j] = std::max(cscale[j], local.inner_score(j, unsigned(q)));
            for (int i = 0; i < no; ++i)
              cscale[j] = std::max(cscale[j], local.link_score(i, j, unsigned(q)));
          }
        long double scale_sum = 0;
        bool feasible = true;
        for (double s : oscale) feasible &= s != -INFINITY, scale_sum += s;
        for (double s : cscale) feasible &= s != -INFINITY, scale_sum += s;
        std::vector<int> order(m);
        std::iota(order.begin(), order.end(), 0);
        std::size_t u = d.cover_first_unit[c];
        do {
          UnitGeometry& g = d.units[u];
          g.set(order.data(), local.members);
          g.log_weight = feasible ? detail::build_unit(
                                        local, g, oscale, cscale, static_cast<double>(scale_sum),
                                        d.arena.data() + g.offset, &d.log_dropped_bound[u])
                                  : -INFINITY;
          ++u;
        } while (std::next_permutation(order.begin(), order.end()));
      }
    });
    progress.update(double(end), double(num_covers));
  }
  progress.finish();
  d.finish();
  return sampler;
}

int CoverSampler::cover_bound() const {
  return impl_->k;
}
int CoverSampler::num_variables() const {
  return impl_->n;
}
std::size_t CoverSampler::num_splits() const {
  const double count = count_candidate_splits(impl_->n, impl_->k);
  return count >= 1.8e19 ? std::numeric_limits<std::size_t>::max()
                         : static_cast<std::size_t>(count);
}
std::size_t CoverSampler::num_cover_sets() const {
  return impl_->covers.size();
}
std::size_t CoverSampler::num_units() const {
  return impl_->units.size();
}
double CoverSampler::log_upper_bound() const {
  return impl_->log_u;
}
std::size_t CoverSampler::clamped_splits() const {
  return 0;
}
std::size_t CoverSampler::memory_bytes() const {
  return impl_->arena.size() * sizeof(detail::Real) + impl_->units.size() * sizeof(UnitGeometry) +
         impl_->alias_prob.size() * (sizeof(double) + sizeof(std::size_t));
}
std::uint64_t CoverSampler::table_fingerprint() const {
  return impl_->fingerprint;
}

double CoverSampler::log_cover_weight(const VertexList& cover) const {
  const auto it = std::lower_bound(impl_->covers.begin(), impl_->covers.end(), cover,
                                   [](const VertexList& a, const VertexList& b) {
                                     return a.size() != b.size() ? a.size() < b.size() : a < b;
                                   });
  if (it == impl_->covers.end() || *it != cover) return -INFINITY;
  const std::size_t c = static_cast<std::size_t>(it - impl_->covers.begin());
  LogSumAccumulator acc;
  for (std::size_t u = impl_->cover_first_unit[c]; u < impl_->cover_first_unit[c + 1]; ++u)
    acc.add(impl_->units[u].log_weight);
  return acc.value();
}

Dag CoverSampler::draw_proposal(Rng& rng, VertexList* cover) const {
  const std::size_t u = impl_->pick_unit(rng);
  if (cover) *cover = impl_->covers[impl_->units[u].cover];
  return impl_->draw_in_unit(u, rng);
}

Dag CoverSampler::draw(Rng& rng, std::uint64_t* trials) const {
  for (;;) {
    if (trials) ++*trials;
    const std::size_t u = impl_->pick_unit(rng);
    Dag dag = impl_->draw_in_unit(u, rng);
    if (canonical_split(dag, impl_->k) == impl_->covers[impl_->units[u].cover]) return dag;
  }
}

}  // namespace covey
