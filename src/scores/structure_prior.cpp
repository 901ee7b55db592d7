// Modular structure priors (docs/mathematics.md section 1), as log factors of the parent-set size.
#include <math.h>  // lgamma_r: lgamma without the shared `signgam` (safe in threads)

#include <cmath>

#include "covey/core/enum_names.hpp"
#include "covey/core/error.hpp"
#include "covey/scores/scores.hpp"

namespace covey {

namespace {
constexpr EnumName<PriorKind> kPriorNames[] = {{PriorKind::kUniform, "uniform"},
                                               {PriorKind::kEdgePenalty, "edge-penalty"},
                                               {PriorKind::kParentCount, "parent-count"}};
}  // namespace

const char* to_string(PriorKind kind) {
  return enum_name(kPriorNames, kind, "uniform");
}

PriorKind prior_kind_from_string(const std::string& text) {
  if (const auto kind = enum_from_name(kPriorNames, text)) return *kind;
  throw OptionError("{prior}: unknown structure prior '" + text + "' (expected " +
                    enum_name_list(kPriorNames) + ")");
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
