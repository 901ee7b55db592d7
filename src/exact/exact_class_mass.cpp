// Posterior mass of a class of DAGs under the posterior over all DAGs of a table: exact by
// enumeration for small n, else the share of exact draws with a Wilson interval. For the
// cover-bounded class D_k the membership test is in_cover_class (cover_class.hpp).
#include <cmath>

#include "covey/core/error.hpp"
#include "covey/core/logmath.hpp"
#include "covey/core/proportion.hpp"
#include "covey/exact/exact_posterior.hpp"
#include "covey/graph/enumerate.hpp"

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
  return m;
}

ClassMass cover_class_mass(const ScoreTable& table, int k, const std::vector<Dag>& draws) {
  if (k < 0) throw OptionError("{k}: the cover bound must be at least 0");
  const DagPredicate inside = [k](const Dag& d) { return in_cover_class(d, k); };
  if (table.num_variables() <= kCoverMassEnumerationMax)
    return class_mass_by_enumeration(table, inside);
  return class_mass_from_draws(draws, inside);
}

}  // namespace covey
