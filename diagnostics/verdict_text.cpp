// The verdict in words (diagnostics.hpp): the one wording of `check`, `chain` and the report.
#include <cmath>
#include <cstdio>
#include <string>

#include "covey/core/enum_names.hpp"
#include "covey/diagnostics/diagnostics.hpp"

namespace covey {

namespace {

constexpr EnumName<Verdict::State> kStateNames[] = {
    {Verdict::State::kConverged, "converged"},
    {Verdict::State::kNotConverged, "not converged"},
    {Verdict::State::kUndetermined, "undetermined"}};

std::string number(double value) {
  char text[32];
  std::snprintf(text, sizeof text, "%g", value);
  return text;
}

std::string counts_text(const char* measure, const Verdict::Counts& c) {
  return std::string(measure) + ": " + std::to_string(c.passing) + " pass, " +
         std::to_string(c.failing) + " fail, " + std::to_string(c.undefined) + " undefined";
}

// "all 12 features pass", "3 of 12 features fail", ...
std::string outcome_text(const Verdict& v, const std::string& noun) {
  const std::string total = std::to_string(v.features);
  switch (v.state) {
    case Verdict::State::kConverged:
      return "converged: " +
             (v.passing == v.features ? "all " + total
                                      : std::to_string(v.passing) + " of " + total) +
             " " + noun + " pass";
    case Verdict::State::kNotConverged:
      return "not converged: " + std::to_string(v.failing) + " of " + total + " " + noun + " fail";
    case Verdict::State::kUndetermined:
      break;
  }
  if (v.features == 0) return "not assessed: no " + noun + " to judge";
  return "not assessed: none of the " + total + " " + noun +
         " has a defined R-hat and bulk ESS (e.g. constant draws)";
}

}  // namespace

const char* to_string(Verdict::State state) {
  return enum_name(kStateNames, state, "undetermined");
}

bool mcse_unreliable(double probability, std::size_t draws) {
  if (draws == 0 || std::isnan(probability)) return false;
  const double margin = 1.0 / static_cast<double>(draws);
  const double nearer = std::fmin(probability, 1 - probability);
  return nearer > 0 && nearer <= margin;  // exactly 0 or 1: constant, MCSE undefined anyway
}

std::string threshold_text(const Thresholds& t) {
  const std::string ess = number(t.min_ess);
  return "R-hat < " + number(t.max_rhat) + ", bulk ESS > " + ess + " and tail ESS > " + ess +
         " where defined";
}

VerdictText verdict_text(const Verdict& v, const Thresholds& t, const VerdictContext& context) {
  VerdictText text;
  text.outcome = outcome_text(v, context.noun);
  if (v.state != Verdict::State::kUndetermined) text.outcome += " (" + threshold_text(t) + ")";
  if (v.undefined > 0 && v.state != Verdict::State::kUndetermined)
    text.outcome += "; " + std::to_string(v.undefined) +
                    " not assessed (R-hat or bulk ESS undefined, e.g. constant draws)";
  // A verdict built from feature counts alone holds no per-measure counts: say nothing then
  // rather than zeros.
  const auto measured = [&](const Verdict::Counts& c) {
    return c.passing + c.failing + c.undefined == v.features;
  };
  if (v.features > 0 && measured(v.rhat) && measured(v.ess_bulk) && measured(v.ess_tail))
    text.measures = counts_text("R-hat", v.rhat) + "; " + counts_text("bulk ESS", v.ess_bulk) +
                    "; " + counts_text("tail ESS", v.ess_tail);
  if (context.chains == 1)
    text.caveats.push_back(
        "1 chain only: R-hat compares the two halves of that chain (split R-hat), so it cannot "
        "show chains that disagree; run 2 or more chains (4 recommended)");
  if (context.unreliable_mcse > 0)
    text.caveats.push_back(
        std::to_string(context.unreliable_mcse) + " " +
        (context.unreliable_mcse == 1 ? "probability lies" : "probabilities lie") + " within 1/" +
        std::to_string(context.draws) + " (one draw) of 0 or 1: " +
        (context.unreliable_mcse == 1 ? "its" : "their") + " MCSE is unreliable");
  return text;
}

}  // namespace covey
