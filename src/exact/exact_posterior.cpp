// The exact engine over all DAGs: planning, the feature assembly shared by both routes, and
// exact draws by walking the layer table (docs/exact-engine.md).
#include "covey/exact/exact_posterior.hpp"

#include <tbb/parallel_for.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <optional>

#include "covey/core/enum_names.hpp"
#include "covey/core/error.hpp"
#include "covey/core/logmath.hpp"
#include "covey/core/memory.hpp"
#include "exact_internal.hpp"

namespace covey {

using exact_internal::deposit_bits;
using exact_internal::drop_bit;
using exact_internal::LayerTable;
using exact_internal::SubsetScores;
using exact_internal::SubsetWeights;

namespace {
constexpr EnumName<ExactRoute> kRouteNames[] = {{ExactRoute::kAuto, "auto"},
                                                {ExactRoute::kLayered, "layered"},
                                                {ExactRoute::kSigned, "signed"}};
}  // namespace

const char* to_string(ExactRoute route) {
  return enum_name(kRouteNames, route, "auto");
}

ExactRoute exact_route_from_string(const std::string& text) {
  if (const auto route = enum_from_name(kRouteNames, text)) return *route;
  throw OptionError("{route}: expected " + enum_name_list(kRouteNames) + ", got '" + text + "'");
}

namespace {

// Seconds per elementary step on one core, fitted to `covey exact --threads 1` at n = 14 and 16
// (Release build, x86-64) and rounded up: a (state, next layer) pair of the layer passes, a term
// with an exponential (the signed sums, the layer factors), a log-space zeta step. The memory
// estimate is the engine's own (the process and the score table come on top).
constexpr double kSecondsPerLayerPair = 3.0e-9;
constexpr double kSecondsPerExpTerm = 1.8e-8;
constexpr double kSecondsPerZetaStep = 2.0e-8;
constexpr int kMaxExactEngineVariables = 30;

double power(double base, int n) {
  return std::pow(base, n);
}

std::string human_seconds(double s) {
  char buf[64];
  if (s >= 7200)
    std::snprintf(buf, sizeof buf, "%.1f hours", s / 3600);
  else if (s >= 120)
    std::snprintf(buf, sizeof buf, "%.0f minutes", s / 60);
  else
    std::snprintf(buf, sizeof buf, "%.1f s", s);
  return buf;
}

}  // namespace

ExactCost estimate_exact_cost(int n, ExactRoute route, bool draws) {
  ExactCost cost;
  cost.route = route;
  const double two_n = power(2, n), three_n = power(3, n), four_n = power(4, n);
  const double threads = 2;               // scratch buffers in flight (per worker)
  const double zeta = n * n * two_n / 2;  // steps of the subset transforms
  if (route == ExactRoute::kLayered) {
    const double zeta_forced = n * power(n, 2) * two_n / 4;
    // Two passes (forward and completion) over 4^n pairs and n 3^(n-1) layer factors.
    cost.seconds = 2 * four_n * kSecondsPerLayerPair + 2 * n * three_n / 3 * kSecondsPerExpTerm +
                   (zeta + zeta_forced) * kSecondsPerZetaStep;
    double bytes = 8 * three_n;  // one layer table (forward, then completion)
    bytes += static_cast<double>(SubsetScores::estimate_bytes(n, true));
    bytes += 6 * 8 * two_n + 8 * n * two_n / 2;        // scales, offsets, Z(U), D_u
    bytes += threads * (16 * two_n + 16 * two_n / 2);  // per-worker products and factors
    cost.bytes = static_cast<std::size_t>(bytes);
  } else {
    // Sink recurrence and source recurrence over 3^n pairs, D_u over n 3^(n-1).
    cost.seconds =
        (2 * three_n + n * three_n / 3) * kSecondsPerExpTerm + zeta * kSecondsPerZetaStep;
    double bytes = static_cast<double>(SubsetScores::estimate_bytes(n, false));
    bytes += 2 * 16 * two_n + 4 * 8 * two_n + 8 * n * two_n / 2;
    bytes += threads * 24 * two_n;
    cost.bytes = static_cast<std::size_t>(bytes);
  }
  (void)draws;  // the layer table is the sampler: no extra memory
  return cost;
}

ExactCost plan_exact(int n, ExactRoute requested, bool draws, const ExactLimits& limits) {
  const std::size_t max_bytes = limits.max_bytes ? limits.max_bytes : default_memory_limit();
  auto fits = [&](const ExactCost& c) {
    return static_cast<double>(c.bytes) <= static_cast<double>(max_bytes) &&
           c.seconds <= limits.max_seconds;
  };
  auto describe = [&](const ExactCost& c) {
    return std::string(to_string(c.route)) + " route: about " + human_seconds(c.seconds) +
           " on one core and " + format_bytes(static_cast<double>(c.bytes));
  };
  const std::string limit_text = "limits " + human_seconds(limits.max_seconds) + " and " +
                                 format_bytes(static_cast<double>(max_bytes));
  if (n > kMaxExactEngineVariables) {
    const ExactCost c = estimate_exact_cost(n, ExactRoute::kSigned, false);
    throw ResourceError("the exact posterior over all DAGs of " + std::to_string(n) +
                        " variables is out of reach (" + describe(c) + "; " + limit_text +
                        "); use the cover-bounded or MCMC commands");
  }
  if (draws && requested == ExactRoute::kSigned)
    throw OptionError("exact draws need the layered route ({route} layered or auto)");
  const ExactCost layered = estimate_exact_cost(n, ExactRoute::kLayered, draws);
  const ExactCost signed_cost = estimate_exact_cost(n, ExactRoute::kSigned, false);
  if (requested == ExactRoute::kLayered || (requested == ExactRoute::kAuto && draws)) {
    if (fits(layered)) return layered;
    throw ResourceError("exact " + std::string(draws ? "draws" : "posterior") + " for " +
                        std::to_string(n) + " variables needs " + describe(layered) +
                        ", beyond the " + limit_text + " (raise {memory_limit} or {max_seconds})");
  }
  if (requested == ExactRoute::kSigned) {
    if (fits(signed_cost)) return signed_cost;
    throw ResourceError("exact posterior for " + std::to_string(n) + " variables needs " +
                        describe(signed_cost) + ", beyond the " + limit_text +
                        " (raise {memory_limit} or {max_seconds})");
  }
  if (fits(layered)) return layered;
  if (fits(signed_cost)) return signed_cost;
  throw ResourceError("exact posterior for " + std::to_string(n) + " variables needs " +
                      describe(layered) + " or " + describe(signed_cost) + ", beyond the " +
                      limit_text +
                      " (raise {memory_limit} or {max_seconds}, or use the cover-bounded or MCMC "
                      "commands)");
}

namespace {

// Edge, adjacency and ancestor probabilities from the subset weights (either route):
//  - G has parent set S at v iff, with U = V minus v and its descendants (an ancestral set),
//    G[U] is a DAG on U, S is a subset of U, and V \ U \ {v} are exactly v's descendants, so
//    P(pa(v) = S) = f_v(S) sum_{U superset of S} Z(U) D_v(U) / Z  (a superset transform);
//  - u ~> v iff v lies outside X = V minus u and its descendants, so
//    P(u ~> v) = sum_{X not holding u, v} Z(X) A_u(X) D_u(X) / Z.
// Both sums are over positive terms, and each gives Z again (a check).
ExactPosterior assemble(const SubsetScores& s, const SubsetWeights& w) {
  const int n = s.n();
  ExactPosterior post;
  post.num_variables = n;
  post.log_total_weight = w.log_z;
  post.edge_probability.assign(std::size_t(n) * n, 0.0);
  post.ancestor_probability.assign(std::size_t(n) * n, 0.0);
  if (n == 0) return post;
  const std::size_t per_node = std::size_t{1} << (n - 1);
  std::vector<double> check(2 * n, 0.0);
  tbb::parallel_for(0, n, [&](int v) {
    const std::uint64_t low = (std::uint64_t{1} << v) - 1;
    auto expand = [&](std::uint64_t k) { return (k & low) | ((k & ~low) << 1); };
    std::vector<double> r(per_node);
    for (std::uint64_t k = 0; k < per_node; ++k)
      r[k] = w.log_z_of[expand(k)] + w.log_d[(std::size_t(v) << (n - 1)) | k];
    std::vector<long double> anc(n, 0.0L);
    long double anc_total = 0;
    for (std::uint64_t k = 0; k < per_node; ++k) {
      const std::uint64_t x = expand(k);
      const double h = r[k] + s.log_a(v, x) - w.log_z;
      if (h == kNegInf) continue;
      const long double e = std::exp(h);
      anc_total += e;
      for (std::uint64_t m = s.full() & ~x & ~(std::uint64_t{1} << v); m; m &= m - 1)
        anc[std::countr_zero(m)] += e;
    }
    exact_internal::log_zeta_supersets(r, n - 1);
    std::vector<long double> edge(n, 0.0L);
    long double set_total = 0;
    const auto sets = s.sets(v);
    const auto scores = s.scores(v);
    for (std::size_t i = 0; i < sets.size(); ++i) {
      const double lp = scores[i] + r[drop_bit(sets[i], v)] - w.log_z;
      if (lp == kNegInf) continue;
      const long double p = std::exp(lp);
      set_total += p;
      for (std::uint64_t m = sets[i]; m; m &= m - 1) edge[std::countr_zero(m)] += p;
    }
    for (int u = 0; u < n; ++u) {
      post.edge_probability[std::size_t(u) * n + v] =
          std::clamp(static_cast<double>(edge[u]), 0.0, 1.0);
      post.ancestor_probability[std::size_t(v) * n + u] =
          std::clamp(static_cast<double>(anc[u]), 0.0, 1.0);
    }
    check[2 * v] = static_cast<double>(set_total);
    check[2 * v + 1] = static_cast<double>(anc_total);
  });
  double worst = 0;
  for (double c : check) worst = std::max(worst, std::abs(c - 1.0));
  for (double other : w.other_log_z) worst = std::max(worst, std::abs(std::expm1(other - w.log_z)));
  post.discrepancy = worst;
  post.clamped = w.clamped;
  return post;
}

struct DrawWorkspace {
  std::vector<double> prod, weight, terms, factors;
};

// Sum of positive doubles with four partial sums (vectorizable; relative error ~ size ulp / 4).
double sum_of(const double* x, std::size_t size) {
  double a[4] = {0, 0, 0, 0};
  std::size_t k = 0;
  for (; k + 4 <= size; k += 4)
    for (int r = 0; r < 4; ++r) a[r] += x[k + r];
  for (; k < size; ++k) a[0] += x[k];
  return (a[0] + a[1]) + (a[2] + a[3]);
}

std::vector<int> members(std::uint64_t m) {
  std::vector<int> out;
  for (; m; m &= m - 1) out.push_back(std::countr_zero(m));
  return out;
}

}  // namespace

struct ExactEngine::Impl {
  ExactCost plan;
  std::size_t memory_limit = 0;  // the limits' max_bytes (0: the default limit)
  int n = 0;
  std::optional<SubsetScores> scores;
  LayerTable layers;
  bool can_draw = false;
  std::vector<double> start_cumulative;  // over source sets k = 1 .. 2^n - 1
  double log_z = 0;
  std::optional<ExactPosterior> posterior;

  // The passes over the subset tables in `scores` (route and limits already planned).
  void run_passes(const ExactOptions& options) {
    const std::uint64_t full = n ? (std::uint64_t{1} << n) - 1 : 0;
    SubsetWeights w;
    if (plan.route == ExactRoute::kLayered) {
      if (options.features) {
        w.log_z_of = exact_internal::layered_forward_pass(*scores);
        w.other_log_z.push_back(w.log_z_of[full]);
      }
      layers = exact_internal::layered_completion_pass(*scores, w);
    } else {
      w.log_z_of = exact_internal::signed_log_z(*scores, w.clamped);
      w.log_z = w.log_z_of[full];
      if (options.features) {
        double log_z_b = kNegInf;
        w.log_d = exact_internal::signed_log_d(*scores, w.clamped, log_z_b);
        w.other_log_z.push_back(log_z_b);
      }
    }
    log_z = w.log_z;
    if (!(log_z > kNegInf))
      throw InputError(
          "no DAG has all its parent sets in the score table (the allowed parent sets force a "
          "directed cycle)");
    if (options.features) posterior = assemble(*scores, w);
    if (options.draws) {
      build_start();
      can_draw = true;
    } else {
      layers = LayerTable{};
    }
  }

  void build_start() {
    const std::uint64_t full = scores->full();
    start_cumulative.assign(full, 0.0);
    std::uint64_t allowed_empty = 0;
    for (int v = 0; v < n; ++v)
      if (scores->empty_set_score(v) != kNegInf) allowed_empty |= std::uint64_t{1} << v;
    long double acc = 0;
    for (std::uint64_t k = 1; k <= full; ++k) {
      if ((k & ~allowed_empty) == 0) acc += layers.next[layers.offset[0] + k];
      start_cumulative[k - 1] = static_cast<double>(acc);
    }
  }

  // Index of the draw among `count` weights given as a running sum: the first whose cumulative
  // weight exceeds u; the last positive one if rounding leaves u at the end.
  Dag draw(Rng& rng, DrawWorkspace& ws) const {
    const SubsetScores& s = *scores;
    const std::uint64_t full = s.full();
    Dag dag(n);
    if (n == 0) return dag;
    // The sources: a set drawn from the start state (every source takes the empty set).
    const double total = start_cumulative.back();
    const double target = uniform01(rng) * total;
    auto it = std::upper_bound(start_cumulative.begin(), start_cumulative.end(), target);
    if (it == start_cumulative.end())
      it = std::lower_bound(start_cumulative.begin(), start_cumulative.end(), total);
    std::uint64_t layer = static_cast<std::uint64_t>(it - start_cumulative.begin()) + 1;
    std::uint64_t placed = layer;
    while (placed != full) {
      const std::uint64_t rest = full & ~placed;
      const std::vector<int> cs = members(rest);
      const std::vector<int> ls = members(layer);
      const std::size_t c = cs.size(), l = ls.size();
      // b(v, P, L) split by the highest vertex of L in the parent set (as in the passes).
      ws.terms.assign(c * l, 0.0);
      ws.factors.assign(c, 0.0);
      for (std::size_t j = 0; j < c; ++j) {
        const double h = s.hmax(cs[j], placed);
        if (h == kNegInf) continue;
        std::uint64_t avoid = placed;
        double sum = 0;
        for (std::size_t xi = l; xi-- > 0;) {
          const double t = std::exp(s.log_e(cs[j], ls[xi], avoid) - h);
          ws.terms[j * l + xi] = t;
          sum += t;
          avoid &= ~(std::uint64_t{1} << ls[xi]);
        }
        ws.factors[j] = sum;
      }
      // Step to layer L' with weight prod_{v in L'} b(v, P, L) * H_P(L').
      const double* next = layers.next.data() + layers.offset[placed];
      const std::size_t size = std::size_t{1} << c;
      exact_internal::subset_products(ws.factors.data(), c, ws.prod);
      ws.weight.resize(size);
      for (std::size_t k = 0; k < size; ++k) ws.weight[k] = ws.prod[k] * next[k];
      const double weight_total = sum_of(ws.weight.data(), size);
      if (!(weight_total > 0)) throw Error("exact sampler reached a state of zero weight");
      const double u = uniform01(rng) * weight_total;
      double acc = 0;
      std::size_t chosen = 0;
      for (std::size_t k = 1; k < size; ++k) {
        if (ws.weight[k] <= 0) continue;
        chosen = k;
        acc += ws.weight[k];
        if (acc > u) break;
      }
      const std::uint64_t next_layer = deposit_bits(chosen, rest);
      for (std::size_t j = 0; j < c; ++j) {
        if (!((chosen >> j) & 1U)) continue;
        dag.parent_mask(cs[j]) =
            draw_parent_set(cs[j], placed, ls, &ws.terms[j * l], ws.factors[j], rng);
      }
      placed |= next_layer;
      layer = next_layer;
    }
    return dag;
  }

  // A parent set Q of v inside `placed` meeting the layer `ls`, with probability
  // f_v(Q) / sum: first the highest layer vertex x in Q (weights `terms`), then Q among the
  // sets holding x and avoiding the layer vertices above x.
  std::uint64_t draw_parent_set(int v, std::uint64_t placed, const std::vector<int>& ls,
                                const double* terms, double sum, Rng& rng) const {
    const SubsetScores& s = *scores;
    const std::size_t l = ls.size();
    double u = uniform01(rng) * sum;
    std::size_t pick = l - 1;
    for (std::size_t xi = l; xi-- > 0;) {
      if (terms[xi] <= 0) continue;
      pick = xi;
      if (u < terms[xi]) break;
      u -= terms[xi];
    }
    std::uint64_t within = placed;
    for (std::size_t xi = pick + 1; xi < l; ++xi) within &= ~(std::uint64_t{1} << ls[xi]);
    const int x = ls[pick];
    const double norm = s.log_e(v, x, within);
    const auto sets = s.sets(v);
    const auto scores_v = s.scores(v);
    const double target = uniform01(rng);
    double acc = 0;
    std::uint64_t last = 0;
    bool found = false;
    for (std::uint32_t idx : s.sets_holding(v, x)) {
      if (sets[idx] & ~within) continue;
      last = sets[idx];
      found = true;
      acc += std::exp(scores_v[idx] - norm);
      if (acc > target) return last;
    }
    if (!found) throw Error("exact sampler found no parent set for a vertex");
    return last;
  }
};

ExactEngine::ExactEngine(const ScoreTable& table, const ExactOptions& options)
    : impl_(std::make_unique<Impl>()) {
  Impl& m = *impl_;
  m.n = table.num_variables();
  m.plan = plan_exact(m.n, options.route, options.draws, options.limits);
  m.memory_limit = options.limits.max_bytes;
  m.scores.emplace(table, m.plan.route == ExactRoute::kLayered);
  m.run_passes(options);
}

ExactEngine::ExactEngine(const std::vector<std::vector<double>>& log_weights,
                         const ExactOptions& options)
    : impl_(std::make_unique<Impl>()) {
  Impl& m = *impl_;
  m.n = static_cast<int>(log_weights.size());
  m.plan = plan_exact(m.n, ExactRoute::kLayered, options.draws, options.limits);
  m.memory_limit = options.limits.max_bytes;
  m.scores.emplace(log_weights);
  m.run_passes(options);
}

ExactEngine::~ExactEngine() = default;
ExactEngine::ExactEngine(ExactEngine&&) noexcept = default;
ExactEngine& ExactEngine::operator=(ExactEngine&&) noexcept = default;

const ExactCost& ExactEngine::plan() const {
  return impl_->plan;
}
double ExactEngine::log_total_weight() const {
  return impl_->log_z;
}

const ExactPosterior& ExactEngine::posterior() const {
  if (!impl_->posterior) throw Error("exact engine was built without features");
  return *impl_->posterior;
}

Dag ExactEngine::draw(Rng& rng) const {
  if (!impl_->can_draw) throw Error("exact engine was built without draws");
  DrawWorkspace ws;
  return impl_->draw(rng, ws);
}

std::vector<Dag> ExactEngine::draw_many(std::size_t count, std::uint64_t seed) const {
  if (!impl_->can_draw) throw Error("exact engine was built without draws");
  require_draws_memory(static_cast<double>(count), impl_->n, "number of draws",
                       impl_->memory_limit);
  std::vector<Dag> out(count);
  const std::size_t blocks = (count + kDrawsPerStream - 1) / kDrawsPerStream;
  tbb::parallel_for(std::size_t{0}, blocks, [&](std::size_t b) {
    Rng rng = make_stream(seed, b);
    DrawWorkspace ws;
    const std::size_t end = std::min(count, (b + 1) * kDrawsPerStream);
    for (std::size_t i = b * kDrawsPerStream; i < end; ++i) out[i] = impl_->draw(rng, ws);
  });
  return out;
}

double exact_log_total_weight_signed(const ScoreTable& table, long long* clamped) {
  const int n = table.num_variables();
  if (n > kMaxExactEngineVariables) plan_exact(n, ExactRoute::kSigned, false, ExactLimits{});
  const SubsetScores s(table, false);
  long long c = 0;
  const std::vector<double> log_z = exact_internal::signed_log_z(s, c);
  if (clamped) *clamped = c;
  return log_z[s.full()];
}

}  // namespace covey
