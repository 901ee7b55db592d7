#pragma once
// The exact posterior over ALL DAGs whose parent sets are in the table, for small n
// (docs/mathematics.md sections 5 and 7; docs/exact-engine.md): the total weight Z, the probability
// of every directed edge, adjacency and ancestor relation, exact independent draws, and the
// posterior mass of the cover-bounded class D_k. The ground truth for users and for covey's own
// tests.
//
// Two routes compute the same subset weights:
//  - layered: a DP over root layers with positive sums only (3^n table, 4^n time); the route
//    of choice whenever its table fits, and the only one that draws;
//  - signed:  the sink recurrence and inclusion-exclusion (2^n memory, n 3^n time), for tables
//    a little larger; its cancellation error is bounded in docs/exact-engine.md.
// The work is estimated before it starts; a problem beyond the limits is refused with the
// estimates (ResourceError), never left to hang or to exhaust memory.
#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "covey/core/random.hpp"
#include "covey/graph/dag.hpp"
#include "covey/scores/score_table.hpp"

namespace covey {

enum class ExactRoute { kAuto, kLayered, kSigned };
const char* to_string(ExactRoute route);
ExactRoute exact_route_from_string(const std::string& text);  // throws InputError

struct ExactLimits {
  std::size_t max_bytes = 0;  // ceiling of the estimated peak memory; 0: default_memory_limit()
  double max_seconds = 3600;  // estimated single-core seconds
};

struct ExactCost {
  ExactRoute route = ExactRoute::kLayered;
  double seconds = 0;     // estimated single-core time
  std::size_t bytes = 0;  // estimated peak memory
};

// Estimates for a table of n variables on a route (kLayered or kSigned); `draws` keeps the
// layer table for sampling.
ExactCost estimate_exact_cost(int n, ExactRoute route, bool draws);
// The route to use: the requested one, or with kAuto the layered route when it fits the limits
// and else the signed one (never for draws). Throws ResourceError naming n, the estimated time
// and memory and the limits when nothing fits.
ExactCost plan_exact(int n, ExactRoute requested, bool draws, const ExactLimits& limits);

struct ExactOptions {
  ExactLimits limits;
  ExactRoute route = ExactRoute::kAuto;
  bool features = true;  // edge, adjacency and ancestor probabilities
  bool draws = false;    // keep the layer table for exact draws
};

struct ExactPosterior {
  int num_variables = 0;
  double log_total_weight = 0;               // log Z
  std::vector<double> edge_probability;      // P(u -> v) at [u * n + v]
  std::vector<double> ancestor_probability;  // P(u ~> v) at [u * n + v], paths of length >= 1
  ExactRoute route = ExactRoute::kLayered;
  // Largest relative difference between the independent evaluations of Z the engine makes
  // (two passes, one per vertex through its descendant sets, and the total probability of
  // each vertex's parent sets): an honest indicator of the numerical error.
  double discrepancy = 0;
  long long clamped = 0;  // signed route: negative sums clamped to 0

  double edge(int from, int to) const { return edge_probability[from * num_variables + to]; }
  // The two directions exclude each other; their sum can pass 1 only by rounding.
  double adjacency(int a, int b) const { return std::min(1.0, edge(a, b) + edge(b, a)); }
  double ancestor(int from, int to) const {
    return ancestor_probability[from * num_variables + to];
  }
};

class ExactEngine {
 public:
  // Plans (may throw ResourceError), then runs the passes. Throws InputError when no DAG has all
  // its parent sets in the table.
  explicit ExactEngine(const ScoreTable& table, const ExactOptions& options = {});
  // The same over all DAGs on m = log_weights.size() nodes whose local weights are given densely:
  // log_weights[v][Q] = log g_v(Q) for every node set Q (bit u: node u), -inf where Q is not
  // allowed and always where Q holds v. The layered route only (options.route is ignored). The
  // exact block move of the chains draws from it with the weights it derives each step
  // (docs/mathematics.md, "Exact block moves").
  ExactEngine(const std::vector<std::vector<double>>& log_weights, const ExactOptions& options);
  ~ExactEngine();
  ExactEngine(ExactEngine&&) noexcept;
  ExactEngine& operator=(ExactEngine&&) noexcept;

  const ExactCost& plan() const;
  double log_total_weight() const;
  // Available when built with features (else throws Error).
  const ExactPosterior& posterior() const;

  // Exact independent draws (built with draws, else throws Error). Draw i of draw_many uses the
  // stream make_stream(seed, i / kDrawsPerStream), so the result is the same for any thread
  // count and a longer run extends a shorter one.
  static constexpr std::size_t kDrawsPerStream = 256;
  Dag draw(Rng& rng) const;
  std::vector<Dag> draw_many(std::size_t count, std::uint64_t seed) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// log Z by the sink recurrence alone (O(3^n) time, O(n 2^n) memory); `clamped` counts negative
// intermediate sums. A cross-check of the layered route, and log Z for larger tables.
double exact_log_total_weight_signed(const ScoreTable& table, long long* clamped = nullptr);

// Writes `draws` of `engine` (drawn by draw_many(draws.size(), seed)) as a draws file of kind
// "exact-draws" (draws_file.hpp): each draw's log weight, and as attributes the seed, log Z, the
// route, the draws per random stream, `command_line` and this build's version. Read it back with
// read_draws. Atomic, like write_draws; an existing `path` is refused unless `overwrite`
// (require_new_output).
void write_exact_draws(const std::string& path, const ScoreTable& table, const ExactEngine& engine,
                       const std::vector<Dag>& draws, std::uint64_t seed,
                       const std::string& command_line, bool overwrite = false);

}  // namespace covey

namespace covey {

// ---- Posterior mass of a class of DAGs (docs/mathematics.md section 7) ----

struct ClassMass {
  double estimate = 0;     // P(class | data) under the posterior over all DAGs of the table
  double lo = 0, hi = 0;   // 95% interval (Wilson for draws; the estimate itself when exact)
  std::string method;      // "enumeration", "exact-draws" or "cover-engine"
  std::size_t draws = 0;   // draws used (exact-draws, cover-engine)
  std::size_t inside = 0;  // of which inside the class
  // The same on a natural-log scale, finite however small the mass (-inf only for no DAG):
  // tiny masses are shown as powers of ten from these, never as 0.
  double log_estimate = 0, log_lo = 0, log_hi = 0;
};

using DagPredicate = std::function<bool(const Dag&)>;

// Exact, by enumerating every DAG of the table (n <= 8; InputError above).
ClassMass class_mass_by_enumeration(const ScoreTable& table, const DagPredicate& inside);
// Estimated from exact independent draws, with the Wilson 95% interval.
ClassMass class_mass_from_draws(const std::vector<Dag>& draws, const DagPredicate& inside);

// The mass of the cover-bounded class D_k (membership by in_cover_class): by enumeration for
// n <= kCoverMassEnumerationMax, else from `draws` (exact draws of this table).
inline constexpr int kCoverMassEnumerationMax = 6;
ClassMass cover_class_mass(const ScoreTable& table, int k, const std::vector<Dag>& draws);
// The mass of D_k as Z_k / Z: log Z_k from the cover engine's exact draws (log U times the
// acceptance rate, Wilson interval; docs/mathematics.md section 4) minus `log_total_weight`
// (log Z over all DAGs). Finite however small the mass: the route when exact draws over all
// DAGs find none inside D_k. `trials_wanted` accepted cover draws are made from `seed`.
ClassMass cover_class_mass_from_weights(const ScoreTable& table, int k, double log_total_weight,
                                        std::uint64_t seed, std::size_t accepted_wanted = 2000,
                                        std::uint64_t memory_limit = 0);
// Text of a probability for people: fixed decimals down to 1e-4, below that a power of ten
// from its natural log ("10^-37.4"), never "0" for a positive mass.
std::string format_probability(double estimate, double log_estimate);

}  // namespace covey
