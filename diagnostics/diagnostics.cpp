// Split R-hat, bulk/tail ESS and MCSE of one feature, step for step as R's posterior 1.4.0
// computes them (its functions .split_chains, z_scale, .rhat, .ess, autocovariance, rhat,
// ess_bulk, ess_quantile, ess_tail, ess_mean, mcse_mean).
#include <algorithm>
#include <boost/math/distributions/normal.hpp>
#include <cfloat>
#include <cmath>
#include <complex>
#include <functional>
#include <limits>
#include <numeric>
#include <optional>
#include <string>
#include <unsupported/Eigen/FFT>

#include "covey/core/error.hpp"
#include "covey/diagnostics/diagnostics.hpp"
#include "diagnostics_internal.hpp"

namespace covey {

namespace diagnostics_detail {

bool should_return_na(std::span<const double> values) {
  double lo = INFINITY, hi = -INFINITY;
  for (double v : values) {
    if (!std::isfinite(v)) return true;
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
  return !(std::abs(hi - lo) >= DBL_EPSILON);  // an empty input is constant too
}

namespace {

// Sum with four partial sums (instruction-level parallelism; the order is fixed, so results
// are reproducible).
template <class Term>
double sum_of(std::span<const double> values, Term term) {
  double s[4] = {0, 0, 0, 0};
  const std::size_t n = values.size(), blocks = n / 4 * 4;
  for (std::size_t i = 0; i < blocks; i += 4)
    for (int k = 0; k < 4; ++k) s[k] += term(values[i + k]);
  for (std::size_t i = blocks; i < n; ++i) s[0] += term(values[i]);
  return (s[0] + s[1]) + (s[2] + s[3]);
}

}  // namespace

bool all_equal(std::span<const double> values) {
  return std::adjacent_find(values.begin(), values.end(), std::not_equal_to<>()) == values.end();
}

double r_mean(std::span<const double> values) {
  if (all_equal(values)) return values.empty() ? NAN : values[0];
  const auto n = static_cast<double>(values.size());
  double m = sum_of(values, [](double v) { return v; }) / n;
  if (std::isfinite(m)) m += sum_of(values, [m](double v) { return v - m; }) / n;
  return m;
}

double r_variance(std::span<const double> values, double mean) {
  const double sum = sum_of(values, [mean](double v) { return (v - mean) * (v - mean); });
  return sum / static_cast<double>(values.size() - 1);
}

double r_mean_of_two(double a, double b) {
  long double m = (static_cast<long double>(a) + b) / 2;
  m += ((a - m) + (b - m)) / 2;
  return static_cast<double>(m);
}

namespace {
auto partial_sorter(std::vector<double>& values) {
  return [&values](std::size_t k) {
    std::nth_element(values.begin(), values.begin() + (k - 1), values.end());
    return values[k - 1];
  };
}
}  // namespace

double r_quantile7(std::vector<double>& values, double prob) {
  return r_quantile7(values.size(), prob, partial_sorter(values));
}

double r_median(std::vector<double>& values) {
  return r_median(values.size(), partial_sorter(values));
}

}  // namespace diagnostics_detail

using namespace diagnostics_detail;

namespace {

// Smallest multiple of 4 (the sizes for which Eigen's real FFT runs at half cost) of the form
// 4 * 2^a 3^b 5^c that is at least `minimum`. Any length >= 2N - 1 gives the same linear
// autocovariances; R pads to 2 * nextn(N), which may be longer.
int good_fft_size(int minimum) {
  for (int m = std::max(1, (minimum + 3) / 4);; ++m) {
    int r = m;
    for (int f : {2, 3, 5})
      while (r % f == 0) r /= f;
    if (r == 1) return 4 * m;
  }
}

// Per-thread FFT plans and buffers, reused across calls. Eigen caches a plan per size; a few
// sizes are kept (chain lengths change as a run grows), then the cache starts afresh.
class FftWorkspace {
 public:
  std::vector<double> padded;
  std::vector<std::complex<double>> spectrum;
  std::vector<double> power;
  std::vector<double> acov;
  std::vector<double> rho;

  FftWorkspace() { reset(); }

  Eigen::FFT<double>& fft_of_size(int nfft) {
    if (std::find(sizes_.begin(), sizes_.end(), nfft) == sizes_.end()) {
      if (sizes_.size() >= kMaxPlans) reset();
      sizes_.push_back(nfft);
    }
    return fft_;
  }

 private:
  static constexpr std::size_t kMaxPlans = 8;

  void reset() {
    fft_ = Eigen::FFT<double>();
    fft_.SetFlag(Eigen::FFT<double>::HalfSpectrum);
    fft_.SetFlag(Eigen::FFT<double>::Unscaled);
    sizes_.clear();
  }

  Eigen::FFT<double> fft_;
  std::vector<int> sizes_;
};

FftWorkspace& workspace() {
  thread_local FftWorkspace ws;
  return ws;
}

// The mean over chains of posterior's autocovariance() of each chain, lags 0..nfft-N exact
// (with zero padding to nfft, lag k is free of wrap-around while k <= nfft - N).
// posterior computes each chain's lags by FFT of the centred chain and scales them to
// var(x) (N - 1) / N at lag 0, which is the raw lag sum over N; the inverse transform is
// linear, so the chains' power spectra are summed first and transformed back once. A constant
// chain contributes zeros, as in posterior.
void mean_autocovariance(DrawsView draws, const std::vector<double>& chain_means, int nfft,
                         FftWorkspace& ws) {
  const std::size_t n = draws.iterations;
  Eigen::FFT<double>& fft = ws.fft_of_size(nfft);
  ws.padded.assign(nfft, 0.0);
  ws.spectrum.resize(nfft / 2 + 1);
  ws.power.assign(nfft / 2 + 1, 0.0);
  for (int c = 0; c < draws.chains; ++c) {
    const auto x = draws.chain(c);
    if (all_equal(x)) continue;
    for (std::size_t t = 0; t < n; ++t) ws.padded[t] = x[t] - chain_means[c];
    fft.fwd(ws.spectrum.data(), ws.padded.data(), nfft);
    for (std::size_t k = 0; k < ws.power.size(); ++k) ws.power[k] += std::norm(ws.spectrum[k]);
  }
  ws.spectrum.assign(ws.power.begin(), ws.power.end());
  fft.inv(ws.padded.data(), ws.spectrum.data(), nfft);
  const double scale = 1 / (static_cast<double>(nfft) * static_cast<double>(n) * draws.chains);
  ws.acov.resize(n);
  for (std::size_t t = 0; t < n; ++t) ws.acov[t] = ws.padded[t] * scale;
}

// posterior's .ess after the autocovariances: Geyer's initial positive sequence made
// monotone, the truncated sum tau, the cap tau >= 1 / log10(S). Indices are R's minus one.
// Only lags below `exact_lags` are known; returns nothing when the sequence reaches beyond.
std::optional<double> ess_from_autocovariance(const std::vector<double>& acov, long exact_lags,
                                              int chains, double var_chain_means,
                                              std::vector<double>& rho) {
  const long n = static_cast<long>(acov.size());
  const double mean_var = acov[0] * static_cast<double>(n) / static_cast<double>(n - 1);
  double var_plus = mean_var * static_cast<double>(n - 1) / static_cast<double>(n);
  if (chains > 1) var_plus += var_chain_means;
  rho.assign(n, 0.0);
  long t = 0;
  double rho_even = 1;
  rho[0] = rho_even;
  double rho_odd = 1 - (mean_var - acov[1]) / var_plus;
  rho[1] = rho_odd;
  while (t < n - 5 && !std::isnan(rho_even + rho_odd) && rho_even + rho_odd > 0) {
    t += 2;
    if (t + 1 >= exact_lags) return std::nullopt;
    rho_even = 1 - (mean_var - acov[t]) / var_plus;
    rho_odd = 1 - (mean_var - acov[t + 1]) / var_plus;
    if (rho_even + rho_odd >= 0) {
      rho[t] = rho_even;
      rho[t + 1] = rho_odd;
    }
  }
  const long max_t = t;
  if (rho_even > 0) rho[max_t] = rho_even;
  // Initial monotone sequence: no pair sum may exceed the previous one.
  t = 0;
  while (t <= max_t - 4) {
    t += 2;
    if (rho[t] + rho[t + 1] > rho[t - 2] + rho[t - 1]) {
      rho[t] = (rho[t - 2] + rho[t - 1]) / 2;
      rho[t + 1] = rho[t];
    }
  }
  // R's sum(rho_hat_t[1:max_t]); for max_t = 0 the index 1:0 selects rho_hat_t[1] alone.
  const double head = max_t == 0 ? rho[0] : std::accumulate(rho.begin(), rho.begin() + max_t, 0.0);
  const double draws = static_cast<double>(chains) * static_cast<double>(n);
  double tau = -1 + 2 * head + rho[max_t];
  tau = std::max(tau, 1 / std::log10(draws));  // posterior caps the ESS at S * log10(S)
  return draws / tau;
}

}  // namespace

void check_draws_shape(int chains, int iterations, std::string_view context) {
  if (chains < 1) throw InputError(std::string(context) + ": no chains");
  if (iterations < kMinDrawsPerChain)
    throw InputError(std::string(context) + ": " + std::to_string(iterations) +
                     " draws per chain; at least " + std::to_string(kMinDrawsPerChain) +
                     " are needed (each half chain needs 3 draws for an ESS)");
}

Draws split_chains(DrawsView draws) {
  const int half = draws.iterations / 2;
  Draws out{{}, 2 * draws.chains, half};
  out.values.reserve(static_cast<std::size_t>(out.chains) * half);
  for (int c = 0; c < draws.chains; ++c) {  // first halves
    const auto chain = draws.chain(c);
    out.values.insert(out.values.end(), chain.begin(), chain.begin() + half);
  }
  for (int c = 0; c < draws.chains; ++c) {  // second halves; an odd middle draw is dropped
    const auto chain = draws.chain(c);
    out.values.insert(out.values.end(), chain.end() - half, chain.end());
  }
  return out;
}

std::vector<double> rank_normalize(std::span<const double> values) {
  const std::size_t s = values.size();
  std::vector<std::size_t> order(s);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::sort(order.begin(), order.end(),
            [&](std::size_t a, std::size_t b) { return values[a] < values[b]; });
  const boost::math::normal_distribution<double> standard_normal;
  constexpr double c = 3.0 / 8.0;
  const double denominator = static_cast<double>(s) - 2 * c + 1;  // S + 1/4
  std::vector<double> z(s);
  for (std::size_t first = 0; first < s;) {
    std::size_t last = first + 1;  // ties: [first, last) share the average rank
    while (last < s && values[order[last]] == values[order[first]]) ++last;
    const double rank = (static_cast<double>(first + 1) + static_cast<double>(last)) / 2;
    const double score = boost::math::quantile(standard_normal, (rank - c) / denominator);
    for (std::size_t i = first; i < last; ++i) z[order[i]] = score;
    first = last;
  }
  return z;
}

namespace diagnostics_detail {

ChainMoments chain_moments(DrawsView draws) {
  ChainMoments m{std::vector<double>(draws.chains), std::vector<double>(draws.chains)};
  for (int c = 0; c < draws.chains; ++c) {
    m.mean[c] = r_mean(draws.chain(c));
    m.var[c] = r_variance(draws.chain(c), m.mean[c]);
  }
  return m;
}

double rhat_from_moments(const ChainMoments& m, int iterations) {
  if (m.mean.size() < 2) return kNaN;  // R's var() of a single chain mean is NA
  const auto n = static_cast<double>(iterations);
  const double var_between = n * r_variance(m.mean, r_mean(m.mean));
  const double var_within = r_mean(m.var);
  return std::sqrt((var_between / var_within + n - 1) / n);
}

namespace {

// A 0/1 chain as its runs of ones, [begin, end) each.
struct OnesRun {
  long begin, end;
};

void runs_of_ones(std::span<const double> x, std::vector<OnesRun>& runs) {
  runs.clear();
  const long n = static_cast<long>(x.size());
  for (long t = 0; t < n;) {
    if (x[static_cast<std::size_t>(t)] == 0) {
      ++t;
      continue;
    }
    const long begin = t;
    while (t < n && x[static_cast<std::size_t>(t)] != 0) ++t;
    runs.push_back({begin, t});
  }
}

// Adds to `raw` (lags 0..n-1) the raw lag sums sum_t (x_t - m)(x_{t+k} - m) of one 0/1 chain,
// exactly, from its runs of ones. The count of t with x_t = x_{t+k} = 1 is a sum over ordered
// pairs of runs A = [a0, a1), B = [b0, b1) (B not before A) of |A ∩ (B - k)|, the correlation of
// two boxes: r(k - (b0 - a1)) - r(k - (b0 - a0)) - r(k - (b1 - a1)) + r(k - (b1 - a0)) with
// r(x) = max(0, x). The ramps are accumulated as slope changes and integrated once; the
// centring terms come from prefix counts. Integer arithmetic up to the centring, so the result
// is the FFT's up to its rounding.
void add_binary_lag_sums(std::span<const double> x, double m, const std::vector<OnesRun>& runs,
                         std::vector<long long>& slope_change, std::vector<double>& raw) {
  const long n = static_cast<long>(x.size());
  slope_change.assign(static_cast<std::size_t>(n) + 1, 0);
  long long value = 0, slope = 0;
  const auto ramp = [&](long long coefficient, long start) {
    if (start < 0) {
      value += coefficient * -start;
      slope += coefficient;
    } else if (start < n) {
      slope_change[static_cast<std::size_t>(start)] += coefficient;
    }
  };
  for (std::size_t i = 0; i < runs.size(); ++i)
    for (std::size_t j = i; j < runs.size(); ++j) {
      const OnesRun& a = runs[i];
      const OnesRun& b = runs[j];
      ramp(+1, b.begin - a.end);
      ramp(-1, b.begin - a.begin);
      ramp(-1, b.end - a.end);
      ramp(+1, b.end - a.begin);
    }
  // prefix[t] = ones among x_0 .. x_{t-1}, from the runs.
  std::vector<long long> prefix(static_cast<std::size_t>(n) + 1, 0);
  for (const OnesRun& r : runs)
    for (long t = r.begin; t < r.end; ++t) prefix[static_cast<std::size_t>(t) + 1] = 1;
  for (long t = 0; t < n; ++t)
    prefix[static_cast<std::size_t>(t) + 1] += prefix[static_cast<std::size_t>(t)];
  const long long total = prefix[static_cast<std::size_t>(n)];
  for (long k = 0; k < n; ++k) {
    slope += slope_change[static_cast<std::size_t>(k)];
    // Ones among the first n - k draws plus ones among the last n - k draws.
    const long long ends =
        prefix[static_cast<std::size_t>(n - k)] + (total - prefix[static_cast<std::size_t>(k)]);
    raw[static_cast<std::size_t>(k)] += static_cast<double>(value) - m * static_cast<double>(ends) +
                                        m * m * static_cast<double>(n - k);
    value += slope;
  }
}

}  // namespace

std::optional<double> binary_ess_given_means(DrawsView draws,
                                             const std::vector<double>& chain_means) {
  // Pair work grows as runs^2; the FFT costs about n log n per chain. Beyond this budget the
  // FFT path is cheaper (measured with bench/diagnostics_bench.cpp).
  constexpr double kPairsPerDraw = 16;
  FftWorkspace& ws = workspace();
  const std::size_t n = static_cast<std::size_t>(draws.iterations);
  std::vector<std::vector<OnesRun>> runs(static_cast<std::size_t>(draws.chains));
  double pairs = 0;
  for (int c = 0; c < draws.chains; ++c) {
    runs_of_ones(draws.chain(c), runs[static_cast<std::size_t>(c)]);
    const auto r = static_cast<double>(runs[static_cast<std::size_t>(c)].size());
    pairs += r * r / 2;
    if (pairs > kPairsPerDraw * static_cast<double>(n) * draws.chains) return std::nullopt;
  }
  ws.acov.assign(n, 0.0);
  std::vector<long long> slope_change;
  for (int c = 0; c < draws.chains; ++c) {
    if (all_equal(draws.chain(c))) continue;  // a constant chain adds zeros, as on the FFT path
    add_binary_lag_sums(draws.chain(c), chain_means[static_cast<std::size_t>(c)],
                        runs[static_cast<std::size_t>(c)], slope_change, ws.acov);
  }
  const double scale = 1 / (static_cast<double>(n) * draws.chains);
  for (double& a : ws.acov) a *= scale;
  const double var_chain_means =
      draws.chains > 1 ? r_variance(chain_means, r_mean(chain_means)) : 0.0;
  return ess_from_autocovariance(ws.acov, static_cast<long>(n), draws.chains, var_chain_means,
                                 ws.rho);
}

double ess_given_means(DrawsView draws, const std::vector<double>& chain_means) {
  FftWorkspace& ws = workspace();
  const double var_chain_means =
      draws.chains > 1 ? r_variance(chain_means, r_mean(chain_means)) : 0.0;
  // Geyer's sequence usually stops long before lag N/8, so a first pass pads only that far
  // (a shorter FFT); when it does not stop there, all lags are computed.
  const int n = draws.iterations;
  const int short_fft = good_fft_size(n + n / 8 + 8);
  mean_autocovariance(draws, chain_means, short_fft, ws);
  if (const auto ess = ess_from_autocovariance(ws.acov, short_fft - n + 1, draws.chains,
                                               var_chain_means, ws.rho))
    return *ess;
  mean_autocovariance(draws, chain_means, good_fft_size(2 * n), ws);
  return *ess_from_autocovariance(ws.acov, n, draws.chains, var_chain_means, ws.rho);
}

}  // namespace diagnostics_detail

double rhat_unsplit(DrawsView draws) {
  if (should_return_na(draws.values)) return kNaN;
  return rhat_from_moments(chain_moments(draws), draws.iterations);
}

double ess_unsplit(DrawsView draws) {
  if (draws.iterations < 3 || should_return_na(draws.values)) return kNaN;
  return ess_given_means(draws, chain_moments(draws).mean);
}

namespace diagnostics_detail {

Draws rank_normalized_split(DrawsView draws) {
  Draws split = split_chains(draws);
  split.values = rank_normalize(split.values);
  return split;
}

double folded_rhat(DrawsView draws, double median) {
  Draws folded{std::vector<double>(draws.values.size()), draws.chains, draws.iterations};
  for (std::size_t i = 0; i < folded.values.size(); ++i)
    folded.values[i] = std::abs(draws.values[i] - median);
  return rhat_unsplit(rank_normalized_split(folded.view()).view());
}

double indicator_ess(DrawsView draws, double q) {
  Draws indicator{std::vector<double>(draws.values.size()), draws.chains, draws.iterations};
  for (std::size_t i = 0; i < draws.values.size(); ++i) indicator.values[i] = draws.values[i] <= q;
  return ess_unsplit(split_chains(indicator.view()).view());
}

double quantile_probability(double prob, std::size_t draws) {
  if (!(prob >= 0 && prob <= 1)) throw InputError("quantile probability must lie in [0, 1]");
  const auto s = static_cast<double>(draws);
  return prob == 1 ? (s - 0.5) / s : prob;  // posterior's adjustment of the top quantile
}

double max_or_nan(double a, double b) {
  return std::isnan(a) || std::isnan(b) ? kNaN : std::max(a, b);
}

double min_or_nan(double a, double b) {
  return std::isnan(a) || std::isnan(b) ? kNaN : std::min(a, b);
}

}  // namespace diagnostics_detail

double rhat(DrawsView draws) {
  const double bulk = rhat_unsplit(rank_normalized_split(draws).view());
  std::vector<double> sorted(draws.values.begin(), draws.values.end());
  return max_or_nan(bulk, folded_rhat(draws, r_median(sorted)));
}

double ess_bulk(DrawsView draws) {
  return ess_unsplit(rank_normalized_split(draws).view());
}

double ess_quantile(DrawsView draws, double prob) {
  prob = quantile_probability(prob, draws.values.size());
  if (should_return_na(draws.values)) return kNaN;
  std::vector<double> sorted(draws.values.begin(), draws.values.end());
  return indicator_ess(draws, r_quantile7(sorted, prob));
}

double ess_tail(DrawsView draws) {
  return min_or_nan(ess_quantile(draws, 0.05), ess_quantile(draws, 0.95));
}

double ess_mean(DrawsView draws) {
  return ess_unsplit(split_chains(draws).view());
}

double mcse_mean(DrawsView draws) {
  const double sd = std::sqrt(r_variance(draws.values, r_mean(draws.values)));
  return sd / std::sqrt(ess_mean(draws));
}

double mean(DrawsView draws) {
  return r_mean(draws.values);
}

}  // namespace covey
