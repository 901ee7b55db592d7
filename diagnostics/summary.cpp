// Per-feature summaries (in parallel over features), thresholds and the worst-first order.
#include <tbb/blocked_range.h>
#include <tbb/enumerable_thread_specific.h>
#include <tbb/parallel_for.h>

#include <algorithm>
#include <atomic>
#include <cmath>
#include <numeric>
#include <optional>
#include <string>
#include <thread>

#include "covey/core/enum_names.hpp"
#include "covey/core/error.hpp"
#include "covey/diagnostics/diagnostics.hpp"
#include "diagnostics_internal.hpp"

namespace covey {

using namespace diagnostics_detail;

namespace {

// A feature whose draws take exactly two values lo < hi (such as an edge indicator).
struct TwoValues {
  double lo = 0;
  double hi = 0;
  std::size_t n_lo = 0;
  std::size_t n_hi = 0;
};

std::optional<TwoValues> as_two_valued(std::span<const double> values) {
  const double first = values[0];
  double second = first;
  std::size_t n_first = 0, n_second = 0;
  for (double v : values) {
    if (v == first) {
      ++n_first;
    } else if (n_second > 0 && v == second) {
      ++n_second;
    } else if (n_second == 0) {
      second = v;
      n_second = 1;
    } else {
      return std::nullopt;
    }
  }
  if (n_second == 0) return std::nullopt;
  if (first < second) return TwoValues{first, second, n_first, n_second};
  return TwoValues{second, first, n_second, n_first};
}

// Every series posterior transforms a two-valued feature into is an affine image of the split
// indicator b = I(x = hi), or constant: the rank-normalized draws take one normal score per
// value; |x - median| is b or 1 - b up to scale, or constant when the median falls between
// the values; I(x <= q) is 1 - b, or constant when q >= hi. R-hat and ESS are invariant under
// affine maps with nonzero slope, so one R-hat and one ESS of b give them all. Means and
// variances come from counts. Returns nothing when the split chains are constant (only the
// dropped middle draws differ), which the general path handles.
std::optional<FeatureSummary> summarize_two_valued(DrawsView draws, const TwoValues& two) {
  const int chains = draws.chains, half = draws.iterations / 2;
  Draws b{std::vector<double>(static_cast<std::size_t>(2 * chains) * half), 2 * chains, half};
  ChainMoments moments{std::vector<double>(2 * chains), std::vector<double>(2 * chains)};
  std::size_t ones = 0;
  for (int j = 0; j < 2 * chains; ++j) {  // split chain j: a first half, then second halves
    const auto chain = draws.chain(j % chains);
    const std::size_t start = j < chains ? 0 : chain.size() - half;
    double* out = &b.values[static_cast<std::size_t>(j) * half];
    std::size_t k = 0;
    for (int t = 0; t < half; ++t) k += (out[t] = chain[start + t] == two.hi) != 0;
    const double p = static_cast<double>(k) / half;
    moments.mean[j] = p;
    moments.var[j] =
        (static_cast<double>(k) * (1 - p) * (1 - p) + static_cast<double>(half - k) * p * p) /
        (half - 1);
    ones += k;
  }
  if (ones == 0 || ones == b.values.size()) return std::nullopt;
  const double rhat_b = rhat_from_moments(moments, half);
  const std::optional<double> from_runs = binary_ess_given_means(b.view(), moments.mean);
  const double ess_b = from_runs ? *from_runs : ess_given_means(b.view(), moments.mean);

  const std::size_t n = draws.values.size();
  const auto sorted = [&](std::size_t k) { return k <= two.n_lo ? two.lo : two.hi; };
  const double median = r_median(n, sorted);
  // The folded draws are constant exactly when both values lie equally far from the median.
  const bool folded_constant = std::abs(two.lo - median) == std::abs(two.hi - median);
  const auto quantile_ess = [&](double prob) {
    return r_quantile7(n, prob, sorted) >= two.hi ? kNaN : ess_b;
  };
  const double n_lo = static_cast<double>(two.n_lo), n_hi = static_cast<double>(two.n_hi);
  const double sd = (two.hi - two.lo) *
                    std::sqrt(n_lo * n_hi / (static_cast<double>(n) * static_cast<double>(n - 1)));
  FeatureSummary s;
  s.mean = (n_lo * two.lo + n_hi * two.hi) / static_cast<double>(n);
  s.rhat = folded_constant ? kNaN : rhat_b;
  s.ess_bulk = ess_b;
  s.ess_tail = min_or_nan(quantile_ess(0.05), quantile_ess(0.95));
  s.ess_mean = ess_b;
  s.mcse = sd / std::sqrt(ess_b);
  return s;
}

double standard_deviation(std::span<const double> values) {
  return std::sqrt(r_variance(values, r_mean(values)));
}

FeatureSummary summarize_general(DrawsView draws) {
  FeatureSummary s;
  const Draws z = rank_normalized_split(draws);
  std::vector<double> sorted(draws.values.begin(), draws.values.end());
  s.mean = r_mean(draws.values);
  s.rhat = max_or_nan(rhat_unsplit(z.view()), folded_rhat(draws, r_median(sorted)));
  s.ess_bulk = ess_unsplit(z.view());
  s.ess_tail = min_or_nan(indicator_ess(draws, r_quantile7(sorted, 0.05)),
                          indicator_ess(draws, r_quantile7(sorted, 0.95)));
  s.ess_mean = ess_unsplit(split_chains(draws).view());
  s.mcse = standard_deviation(draws.values) / std::sqrt(s.ess_mean);
  return s;
}

bool is_undefined(const FeatureSummary& s) {
  return std::isnan(s.rhat) || std::isnan(s.ess_bulk);
}

// The smaller of bulk and tail ESS, the tail one counting only when defined.
double smallest_ess(const FeatureSummary& s) {
  return std::isnan(s.ess_tail) ? s.ess_bulk : std::min(s.ess_bulk, s.ess_tail);
}

}  // namespace

FeatureSummary summarize(DrawsView draws) {
  check_draws_shape(draws.chains, draws.iterations);
  if (draws.values.size() != static_cast<std::size_t>(draws.chains) * draws.iterations)
    throw Error("summarize: " + std::to_string(draws.values.size()) + " values for " +
                std::to_string(draws.chains) + " chains of " + std::to_string(draws.iterations));
  if (should_return_na(draws.values)) {
    FeatureSummary s{r_mean(draws.values), kNaN, kNaN, kNaN, kNaN, kNaN};
    return s;
  }
  if (const auto two = as_two_valued(draws.values))
    if (const auto s = summarize_two_valued(draws, *two)) return *s;
  return summarize_general(draws);
}

std::vector<FeatureSummary> summarize_features(std::size_t count, int chains, int iterations,
                                               const FeatureSource& source,
                                               const ProgressCallback& progress) {
  check_draws_shape(chains, iterations);
  std::vector<FeatureSummary> out(count);
  const std::size_t size = static_cast<std::size_t>(chains) * iterations;
  tbb::enumerable_thread_specific<std::vector<double>> buffers(
      [size] { return std::vector<double>(size); });
  std::atomic<std::size_t> done{0};
  const auto caller = std::this_thread::get_id();
  tbb::parallel_for(tbb::blocked_range<std::size_t>(0, count, 1),
                    [&](const tbb::blocked_range<std::size_t>& range) {
                      std::vector<double>& values = buffers.local();
                      for (std::size_t i = range.begin(); i != range.end(); ++i) {
                        source(i, values);
                        out[i] = summarize({values, chains, iterations});
                        const std::size_t finished = ++done;
                        if (progress && std::this_thread::get_id() == caller) progress(finished);
                      }
                    });
  if (progress) progress(count);
  return out;
}

namespace {
constexpr EnumName<FeatureStatus> kStatusNames[] = {{FeatureStatus::kUndefined, "undefined"},
                                                    {FeatureStatus::kFail, "fail"},
                                                    {FeatureStatus::kPass, "pass"}};
}  // namespace

const char* to_string(FeatureStatus status) {
  return enum_name(kStatusNames, status);
}

FeatureStatus assess_rhat(double rhat, const Thresholds& thresholds) {
  if (std::isnan(rhat)) return FeatureStatus::kUndefined;
  return rhat < thresholds.max_rhat ? FeatureStatus::kPass : FeatureStatus::kFail;
}

FeatureStatus assess_ess(double ess, const Thresholds& thresholds) {
  if (std::isnan(ess)) return FeatureStatus::kUndefined;
  return ess > thresholds.min_ess ? FeatureStatus::kPass : FeatureStatus::kFail;
}

FeatureStatus assess(const FeatureSummary& s, const Thresholds& thresholds) {
  if (is_undefined(s)) return FeatureStatus::kUndefined;
  for (const FeatureStatus m : {assess_rhat(s.rhat, thresholds), assess_ess(s.ess_bulk, thresholds),
                                assess_ess(s.ess_tail, thresholds)})
    if (m == FeatureStatus::kFail) return FeatureStatus::kFail;  // an undefined tail ESS passes
  return FeatureStatus::kPass;
}

std::vector<std::size_t> worst_first(std::span<const FeatureSummary> summaries,
                                     const Thresholds& thresholds) {
  std::vector<std::size_t> order(summaries.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::vector<FeatureStatus> status(summaries.size());
  for (std::size_t i = 0; i < summaries.size(); ++i) status[i] = assess(summaries[i], thresholds);
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    if (status[a] != status[b]) return status[a] < status[b];  // undefined, fail, pass
    if (status[a] == FeatureStatus::kUndefined) return false;  // keep input order
    const FeatureSummary &x = summaries[a], &y = summaries[b];
    // R-hat as shown (4 decimals) first, so that features whose R-hats print alike are ordered
    // by their smallest ESS rather than by invisible digits.
    const double rx = std::round(x.rhat * 1e4), ry = std::round(y.rhat * 1e4);
    if (rx != ry) return rx > ry;
    return smallest_ess(x) < smallest_ess(y);
  });
  return order;
}

namespace {

void count(FeatureStatus status, std::size_t& passing, std::size_t& failing,
           std::size_t& undefined) {
  switch (status) {
    case FeatureStatus::kUndefined:
      ++undefined;
      break;
    case FeatureStatus::kFail:
      ++failing;
      break;
    case FeatureStatus::kPass:
      ++passing;
      break;
  }
}

void count(FeatureStatus status, Verdict::Counts& c) {
  count(status, c.passing, c.failing, c.undefined);
}

}  // namespace

Verdict judge(std::span<const FeatureSummary> summaries, const Thresholds& thresholds) {
  Verdict v;
  v.max_rhat = v.min_ess_bulk = v.min_ess_tail = kNaN;
  v.features = summaries.size();
  // fmax/fmin ignore a NaN operand, so the extremes run over defined values only.
  for (const FeatureSummary& s : summaries) {
    count(assess(s, thresholds), v.passing, v.failing, v.undefined);
    count(assess_rhat(s.rhat, thresholds), v.rhat);
    count(assess_ess(s.ess_bulk, thresholds), v.ess_bulk);
    count(assess_ess(s.ess_tail, thresholds), v.ess_tail);
    v.max_rhat = std::fmax(v.max_rhat, s.rhat);
    v.min_ess_bulk = std::fmin(v.min_ess_bulk, s.ess_bulk);
    v.min_ess_tail = std::fmin(v.min_ess_tail, s.ess_tail);
  }
  v.state = verdict_state(v.passing, v.failing);
  return v;
}

Verdict::State verdict_state(std::size_t passing, std::size_t failing) {
  using State = Verdict::State;
  return passing + failing == 0 ? State::kUndetermined
         : failing == 0         ? State::kConverged
                                : State::kNotConverged;
}

}  // namespace covey
