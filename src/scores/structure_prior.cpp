// Modular structure priors (docs/mathematics.md section 1), as log factors of the parent-set size.
#include <math.h>  // lgamma_r: lgamma without the shared `signgam` (safe in threads)

#include <cmath>

#include "covey/core/error.hpp"
#include "covey/scores/scores.hpp"

namespace covey {

const char* to_string(PriorKind kind) {
  switch (kind) {
    case PriorKind::kUniform:
      return "uniform";
    case PriorKind::kEdgePenalty:
      return "edge-penalty";
    case PriorKind::kParentCount:
      return "parent-count";
  }
  return "uniform";
}

PriorKind prior_kind_from_string(const std::string& text) {
  if (text == "uniform") return PriorKind::kUniform;
  if (text == "edge-penalty") return PriorKind::kEdgePenalty;
  if (text == "parent-count") return PriorKind::kParentCount;
  throw InputError("--prior: unknown structure prior '" + text +
                   "' (expected uniform, edge-penalty or parent-count)");
}

double log_structure_prior(PriorKind kind, double edge_penalty, int num_variables,
                           int num_parents) {
  switch (kind) {
    case PriorKind::kUniform:
      return 0.0;
    case PriorKind::kEdgePenalty:
      return -edge_penalty * num_parents;
    case PriorKind::kParentCount: {
      // -log C(n-1, k) = -(lgamma(n) - lgamma(k+1) - lgamma(n-k)).
      int sign;
      const double n = num_variables, k = num_parents;
      return -(lgamma_r(n, &sign) - lgamma_r(k + 1, &sign) - lgamma_r(n - k, &sign));
    }
  }
  return 0.0;
}

}  // namespace covey
