// Split R-hat, bulk/tail ESS and MCSE of one feature, step for step as R's posterior 1.4.0
// computes them (its functions .split_chains, z_scale, .rhat, .ess, autocovariance, rhat,
// ess_bulk, ess_quantile, ess_tail, ess_mean, mcse_mean).
#include <algorithm>
#include <boost/math/distributions/normal.hpp>
#include <cfloat>
#include <cmath>
#include <complex>
#include <limits>
#include <numeric>
#include <string>
#include <unsupported/Eigen/FFT>

#include "covey/diagnostics.hpp"
#include "covey/error.hpp"
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

double r_mean(std::span<const double> values) {
  const auto n = static_cast<long double>(values.size());
  long double sum = 0;
  for (double v : values) sum += v;
  long double m = sum / n;
  if (std::isfinite(static_cast<double>(m))) {
    long double residual = 0;
    for (double v : values) residual += v - m;
    m += residual / n;
  }
  return static_cast<double>(m);
}

double r_variance(std::span<const double> values, double mean) {
  double sum = 0;
  for (double v : values) sum += (v - mean) * (v - mean);
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

// Per-thread FFT plans and buffers, reused across calls (plans are cached per size by Eigen).
struct FftWorkspace {
  Eigen::FFT<double> fft;
  std::vector<double> padded;
  std::vector<std::complex<double>> spectrum;
  std::vector<double> chain_acov;
  std::vector<double> acov_sum;
  std::vector<double> rho;

  FftWorkspace() {
    fft.SetFlag(Eigen::FFT<double>::HalfSpectrum);
    fft.SetFlag(Eigen::FFT<double>::Unscaled);
  }
};

FftWorkspace& workspace() {
  thread_local FftWorkspace ws;
  return ws;
}

// posterior's autocovariance(): lags 0..N-1 of one chain, by FFT of the zero-padded centred
// chain, normalized as var(x) * (N - 1) / N at lag 0. A constant chain gives zeros.
void autocovariance(std::span<const double> x, FftWorkspace& ws, std::vector<double>& out) {
  const std::size_t n = x.size();
  out.assign(n, 0.0);
  const double m = r_mean(x);
  const double var = r_variance(x, m);
  if (var == 0) return;
  const int nfft = good_fft_size(static_cast<int>(2 * n));
  ws.padded.assign(nfft, 0.0);
  for (std::size_t t = 0; t < n; ++t) ws.padded[t] = x[t] - m;
  ws.spectrum.resize(nfft / 2 + 1);
  ws.fft.fwd(ws.spectrum.data(), ws.padded.data(), nfft);
  for (auto& c : ws.spectrum) c = std::norm(c);
  ws.fft.inv(ws.padded.data(), ws.spectrum.data(), nfft);
  const double scale = var * static_cast<double>(n - 1) / static_cast<double>(n) / ws.padded[0];
  for (std::size_t t = 0; t < n; ++t) out[t] = ws.padded[t] * scale;
}

// R's var() of the chain means.
double variance_of_chain_means(DrawsView draws) {
  std::vector<double> means(draws.chains);
  for (int c = 0; c < draws.chains; ++c) means[c] = r_mean(draws.chain(c));
  return r_variance(means, r_mean(means));
}

// posterior's .ess after the autocovariances: Geyer's initial positive sequence made
// monotone, the truncated sum tau, the cap tau >= 1 / log10(S). Indices are R's minus one.
double ess_from_autocovariance(const std::vector<double>& acov, int chains, double var_plus_extra,
                               std::vector<double>& rho) {
  const long n = static_cast<long>(acov.size());
  const double mean_var = acov[0] * static_cast<double>(n) / static_cast<double>(n - 1);
  const double var_plus =
      mean_var * static_cast<double>(n - 1) / static_cast<double>(n) + var_plus_extra;
  rho.assign(n, 0.0);
  long t = 0;
  double rho_even = 1;
  rho[0] = rho_even;
  double rho_odd = 1 - (mean_var - acov[1]) / var_plus;
  rho[1] = rho_odd;
  while (t < n - 5 && !std::isnan(rho_even + rho_odd) && rho_even + rho_odd > 0) {
    t += 2;
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

double rhat_unsplit(DrawsView draws) {
  if (should_return_na(draws.values)) return kNaN;
  const auto n = static_cast<double>(draws.iterations);
  std::vector<double> chain_mean(draws.chains), chain_var(draws.chains);
  for (int c = 0; c < draws.chains; ++c) {
    chain_mean[c] = r_mean(draws.chain(c));
    chain_var[c] = r_variance(draws.chain(c), chain_mean[c]);
  }
  if (draws.chains < 2) return kNaN;  // R's var() of a single chain mean is NA
  const double var_between = n * r_variance(chain_mean, r_mean(chain_mean));
  const double var_within = r_mean(chain_var);
  return std::sqrt((var_between / var_within + n - 1) / n);
}

double ess_unsplit(DrawsView draws) {
  if (draws.iterations < 3 || should_return_na(draws.values)) return kNaN;
  FftWorkspace& ws = workspace();
  ws.acov_sum.assign(draws.iterations, 0.0);
  for (int c = 0; c < draws.chains; ++c) {
    autocovariance(draws.chain(c), ws, ws.chain_acov);
    for (int t = 0; t < draws.iterations; ++t) ws.acov_sum[t] += ws.chain_acov[t];
  }
  for (double& a : ws.acov_sum) a /= draws.chains;
  const double between = draws.chains > 1 ? variance_of_chain_means(draws) : 0.0;
  return ess_from_autocovariance(ws.acov_sum, draws.chains, between, ws.rho);
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
