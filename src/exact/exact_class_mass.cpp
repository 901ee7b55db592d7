// Posterior mass of a class of DAGs under the posterior over all DAGs of a table: exact by
// enumeration for small n, else the share of exact draws with a Wilson interval. For the
// cover-bounded class D_k the membership test is in_cover_class (cover_class.hpp).
#include <algorithm>
#include <cmath>
#include <cstdio>

#include "covey/core/error.hpp"
#include "covey/core/logmath.hpp"
#include "covey/core/proportion.hpp"
#include "covey/exact/exact_posterior.hpp"
#include "covey/graph/enumerate.hpp"

#include "covey/exact/cover_draws.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "covey/graph/cover_class.hpp"

namespace covey {

ClassMass class_mass_by_enumeration(const ScoreTable& table, const DagPredicate& inside) {
  LogSumAccumulator all, in;
  std::size_t count_in = 0;
  for_each_dag(table, [&](const Dag& d, double lw) {
    all.add(lw);
    if (inside(d)) {
      in.add(lw);
      ++count_in;
    }
  });
  ClassMass m;
  m.method = "enumeration";
  m.inside = count_in;
  m.estimate = in.value() == kNegInf ? 0.0 : std::exp(in.value() - all.value());
  m.lo = m.hi = m.estimate;
  m.log_estimate = m.log_lo = m.log_hi = in.value() - all.value();
  return m;
}

ClassMass class_mass_from_draws(const std::vector<Dag>& draws, const DagPredicate& inside) {
  ClassMass m;
  m.method = "exact-draws";
  m.draws = draws.size();
  for (const Dag& d : draws) m.inside += inside(d) ? 1 : 0;
  if (m.draws == 0) throw InputError("the mass of a class needs at least one exact draw");
  m.estimate = static_cast<double>(m.inside) / static_cast<double>(m.draws);
  const ProportionInterval ci = wilson_interval(m.inside, m.draws);
  m.lo = ci.lo;
  m.hi = ci.hi;
  m.log_estimate = std::log(m.estimate);
  m.log_lo = std::log(m.lo);
  m.log_hi = std::log(m.hi);
  return m;
}

ClassMass cover_class_mass(const ScoreTable& table, int k, const std::vector<Dag>& draws) {
  if (k < 0) throw OptionError("{k}: the cover bound must be at least 0");
  const DagPredicate inside = [k](const Dag& d) { return in_cover_class(d, k); };
  if (table.num_variables() <= kCoverMassEnumerationMax)
    return class_mass_by_enumeration(table, inside);
  return class_mass_from_draws(draws, inside);
}

ClassMass cover_class_mass_from_weights(const ScoreTable& table, int k, double log_total_weight,
                                        std::uint64_t seed, std::size_t accepted_wanted,
                                        std::uint64_t memory_limit) {
  CoverSamplerOptions options;
  options.memory_limit_bytes = memory_limit;
  options.show_progress = false;
  const CoverSampler sampler = CoverSampler::build(table, k, options);
  const CoverDrawBatch batch =
      draw_cover_batch(sampler, seed, accepted_wanted, /*show_progress=*/false, memory_limit);
  const LogTotalWeightEstimate z =
      estimate_log_total_weight(sampler.log_upper_bound(), batch.dags.size(), batch.trials);
  ClassMass m;
  m.method = "cover-engine";
  m.draws = batch.trials;
  m.inside = batch.dags.size();
  // Z_k <= Z, so the mass and its interval stay at most 1 (log 0).
  m.log_estimate = std::min(0.0, z.log_estimate - log_total_weight);
  m.log_lo = std::min(0.0, z.log_lo - log_total_weight);
  m.log_hi = std::min(0.0, z.log_hi - log_total_weight);
  m.estimate = std::exp(m.log_estimate);
  m.lo = std::exp(m.log_lo);
  m.hi = std::exp(m.log_hi);
  return m;
}

std::string format_probability(double estimate, double log_estimate) {
  char text[64];
  if (estimate >= 1e-4 || !(log_estimate > kNegInf))
    std::snprintf(text, sizeof text, "%.6f", estimate);
  else
    std::snprintf(text, sizeof text, "10^%.1f", log_estimate / std::log(10.0));
  return text;
}

}  // namespace covey
