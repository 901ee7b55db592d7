#pragma once
// Convergence diagnostics for MCMC draws of scalar features (one number per draw per chain):
// split R-hat, bulk and tail effective sample size (ESS), ESS and Monte Carlo standard error of
// the mean, and a regenerative standard error over i.i.d. tours.
//
// Definitions are those of Vehtari, Gelman, Simpson, Carpenter & Buerkner (2021, Bayesian
// Analysis), computed step for step as R's `posterior` package (version 1.4.0) computes them, so
// results agree with it to rounding: split chains in halves (an odd middle draw is dropped),
// rank-normalize the pooled draws (average ranks for ties, normal scores of
// (r - 3/8) / (S + 1/4)), autocovariances by FFT, Geyer's initial monotone sequence, and
// posterior's cap of the ESS at S * log10(S).
//
// Undefined values are NaN, exactly where posterior returns NA: a feature whose draws are all
// equal (max - min below the double epsilon, posterior's test) or contain a non-finite value has
// undefined R-hat, ESS and MCSE; a quantile indicator that is constant (the 95% quantile of a
// 0/1 feature is usually its maximum) has undefined ESS, and so has the tail ESS built on it.
// An undefined value is never reported as converged.
#include <cstddef>
#include <functional>
#include <limits>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace covey {

// Fewest draws per chain accepted: each split half then has at least 3 draws, the fewest for
// which posterior defines an ESS.
inline constexpr int kMinDrawsPerChain = 6;

// Draws of one feature: `chains` chains of `iterations` draws each, chain-major (draw t of
// chain c is values[c * iterations + t]).
struct DrawsView {
  std::span<const double> values;
  int chains = 0;
  int iterations = 0;

  std::span<const double> chain(int c) const {
    return values.subspan(static_cast<std::size_t>(c) * iterations, iterations);
  }
};

// Owning counterpart of DrawsView.
struct Draws {
  std::vector<double> values;
  int chains = 0;
  int iterations = 0;

  DrawsView view() const { return {values, chains, iterations}; }
};

// Throws InputError unless chains >= 1 and iterations >= kMinDrawsPerChain; `context` (a file
// name, an option) starts the message.
void check_draws_shape(int chains, int iterations, std::string_view context = "draws");

// --- Building blocks, each named after the posterior function it reproduces ---------------

// Splits every chain into its first and second half (posterior's .split_chains): the result
// has 2 * chains chains of floor(iterations / 2) draws; first halves come first.
Draws split_chains(DrawsView draws);

// Normal scores of the average ranks of all values pooled (posterior's z_scale).
std::vector<double> rank_normalize(std::span<const double> values);

// Potential scale reduction of the chains as given, no splitting (posterior's .rhat).
double rhat_unsplit(DrawsView draws);

// ESS of the chains as given, no splitting (posterior's .ess): FFT autocovariances, Geyer's
// initial monotone sequence, ESS capped at S * log10(S).
double ess_unsplit(DrawsView draws);

// --- The diagnostics (posterior's functions of the same names) -----------------------------

// max(rank-normalized split R-hat, rank-normalized split R-hat of |x - median(x)|).
double rhat(DrawsView draws);
// ESS of the rank-normalized split chains.
double ess_bulk(DrawsView draws);
// ESS of the split indicator I(x <= q) for q the prob-quantile (R's type 7) of all draws.
double ess_quantile(DrawsView draws, double prob);
// min(ess_quantile(0.05), ess_quantile(0.95)); undefined when either is.
double ess_tail(DrawsView draws);
// ESS of the split chains for the mean (posterior's ess_mean, equal to ess_basic).
double ess_mean(DrawsView draws);
// Monte Carlo standard error of the mean: sd(all draws) / sqrt(ess_mean).
double mcse_mean(DrawsView draws);
// Mean of all draws.
double mean(DrawsView draws);

// --- Summaries of many features ------------------------------------------------------------

// Everything reported per feature; NaN marks an undefined value.
struct FeatureSummary {
  double mean = 0;
  double rhat = 0;
  double ess_bulk = 0;
  double ess_tail = 0;
  double ess_mean = 0;
  double mcse = 0;
};

// The same numbers as the single functions above, to rounding (throws InputError for fewer chains
// or draws than check_draws_shape accepts), computed with shared intermediate results (a feature
// taking two values, such as an edge indicator, needs one autocovariance pass instead of four,
// since every transformed series is then an affine image of it).
FeatureSummary summarize(DrawsView draws);

// Writes the draws of feature `index` into `values` (chain-major, chains * iterations long).
// Called concurrently from several threads, each with its own buffer.
using FeatureSource = std::function<void(std::size_t index, std::span<double> values)>;
// Called with the number of features finished so far, only on the calling thread.
using ProgressCallback = std::function<void(std::size_t done)>;

// Summaries of features 0..count-1, computed in parallel under TBB. Each feature is computed by
// one thread in a fixed order, so results are identical for every thread count.
std::vector<FeatureSummary> summarize_features(std::size_t count, int chains, int iterations,
                                               const FeatureSource& source,
                                               const ProgressCallback& progress = {});

// --- Thresholds and verdict ----------------------------------------------------------------

// Vehtari et al.'s recommended thresholds: R-hat < 1.01 and bulk and tail ESS > 400.
struct Thresholds {
  double max_rhat = 1.01;
  double min_ess = 400;
};

// kUndefined: R-hat or bulk ESS is undefined (constant draws, or posterior's other NA cases):
//   the feature cannot be assessed and is flagged, never counted as converged.
// kFail: R-hat >= max_rhat (an infinite R-hat included), or bulk ESS or a defined tail ESS
//   <= min_ess.
// kPass: otherwise. An undefined tail ESS alone is not checked: for a feature with few
//   distinct values the 5% or 95% quantile is an extreme value and its indicator is constant.
enum class FeatureStatus { kUndefined, kFail, kPass };
const char* to_string(FeatureStatus status);
FeatureStatus assess(const FeatureSummary& summary, const Thresholds& thresholds);
// One measure against its threshold: undefined (NaN), fail (R-hat >= max_rhat; ESS <= min_ess)
// or pass. assess() combines the three as described above.
FeatureStatus assess_rhat(double rhat, const Thresholds& thresholds);
FeatureStatus assess_ess(double ess, const Thresholds& thresholds);

// Indices of the features worst first: undefined ones, then failing, then passing; within a
// group by R-hat descending, then by the smaller of bulk and tail ESS ascending, then by index.
std::vector<std::size_t> worst_first(std::span<const FeatureSummary> summaries,
                                     const Thresholds& thresholds);

// The one convergence verdict of covey: `check`, the chains' stopping rule (until_rhat /
// until_ess) and the report all judge with judge() below.
struct Verdict {
  // Passing, failing and undefined counts, of features (assess) or of one measure.
  struct Counts {
    std::size_t passing = 0, failing = 0, undefined = 0;
  };
  // kUndetermined: no feature could be assessed (none, or all undefined).
  enum class State { kConverged, kNotConverged, kUndetermined };

  std::size_t features = 0;  // judged
  std::size_t passing = 0;
  std::size_t failing = 0;
  std::size_t undefined = 0;
  Counts rhat, ess_bulk, ess_tail;  // per measure (assess_rhat, assess_ess)
  // Extremes over the defined values (NaN when none is defined).
  double max_rhat = std::numeric_limits<double>::quiet_NaN();
  double min_ess_bulk = std::numeric_limits<double>::quiet_NaN();
  double min_ess_tail = std::numeric_limits<double>::quiet_NaN();
  State state = State::kUndetermined;
  // Converged: every assessable feature passes, and at least one could be assessed. Undefined
  // features are reported beside it, never counted as converged.
  bool converged() const { return failing == 0 && passing > 0; }
};
Verdict judge(std::span<const FeatureSummary> summaries, const Thresholds& thresholds);
// The state of the counts: undetermined when none was assessed, else converged iff none fails.
Verdict::State verdict_state(std::size_t passing, std::size_t failing);
// "converged", "not converged" or "undetermined".
const char* to_string(Verdict::State state);

// --- The verdict in words --------------------------------------------------------------------
// One wording for `check`, `chain`'s summary and the report: the outcome, then pass / fail /
// undefined per measure, then caveats. An undefined measure is never counted as met, so the
// text says "N of M" whenever some features could not be assessed.

// The MCSE of a probability estimated from `draws` draws in all is unreliable when the estimate
// lies within 1/draws of 0 or 1 (at most one draw differs): the standard error then rests on one
// change of the indicator. A constant feature (exactly 0 or 1) has no MCSE at all (undefined,
// counted as not assessed) and is not counted here.
bool mcse_unreliable(double probability, std::size_t draws);

// What the wording needs beyond the counts of the verdict.
struct VerdictContext {
  int chains = 0;                   // below 2: R-hat compares the halves of one chain only
  std::string noun = "features";    // plural of what was judged, e.g. "edge features"
  std::size_t unreliable_mcse = 0;  // probabilities within 1/draws of 0 or 1 (mcse_unreliable)
  std::size_t draws = 0;            // draws in all chains, named in the MCSE caveat
};

struct VerdictText {
  std::string outcome;   // e.g. "not converged: 3 of 170 assessed features fail ..."
  std::string measures;  // "R-hat: 167 pass, 3 fail, 161 undefined; bulk ESS: ...; tail ESS: ..."
                         // empty when the verdict holds no per-measure counts
  std::vector<std::string> caveats;  // fewer than 2 chains; unreliable MCSE
};
// The rule as a phrase: "R-hat < 1.01, bulk ESS > 400 and tail ESS > 400 where defined".
std::string threshold_text(const Thresholds& thresholds);
VerdictText verdict_text(const Verdict& verdict, const Thresholds& thresholds,
                         const VerdictContext& context);

// --- Regenerative standard error -----------------------------------------------------------

// Ratio estimator over i.i.d. tours (Mykland, Tierney & Yu 1995). Tour j contributes its sum
// Y_j and length N_j; mean = sum Y / sum N and
//   standard_error = sqrt(sum_j (Y_j - mean * N_j)^2) / sum_j N_j,
// their variance estimate sigma^2 / R with sigma^2 = sum_j (Y_j - mean N_j)^2 / (R Nbar^2).
// tour_length_cv = sqrt(sum_j (N_j - Nbar)^2 / R) / (Nbar sqrt(R)), the estimated coefficient
// of variation of Nbar, which they advise keeping small for the estimate to be trusted.
struct RegenerativeEstimate {
  double mean = 0;
  double standard_error = 0;
  std::size_t tours = 0;
  double tour_length_cv = 0;
};

// `boundaries[c]` holds increasing positions b_0 < b_1 < ... in [0, iterations] of chain c at
// which a new tour starts; tour k of the chain is draws [b_k, b_{k+1}). Draws before the first
// and from the last boundary on (an unfinished tour) are left out; pass `iterations` as the last
// boundary when the chain ended at a regeneration. Throws InputError on boundaries out of order
// or range, or fewer than 2 tours in all.
RegenerativeEstimate regenerative_mean(DrawsView draws,
                                       std::span<const std::vector<std::size_t>> boundaries);

}  // namespace covey
