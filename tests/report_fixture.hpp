#pragma once
// A ReportData filled with synthetic values of a plausible shape (for rendering tests and for
// looking at the report): a hidden DAG gives the edge probabilities, chains climb from their
// starting graphs to a common level, diagnostics pass or (on request) fail for some features.
// The numbers are made up; nothing here is a statistical result.
#include <algorithm>
#include <boost/random/normal_distribution.hpp>
#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include "covey/core/random.hpp"
#include "covey/report/report.hpp"

namespace covey::testing_util {

struct SyntheticReportOptions {
  int variables = 8;
  int chains = 4;
  int draws = 600;  // per chain
  bool converged = true;
  bool with_comparison = true;
  bool with_cycle = false;    // plant a 3-cycle of edges with probability 0.6 each
  int constant_features = 3;  // edges never sampled: probability 0, R-hat and ESS undefined
  std::uint64_t seed = 7;
};

inline ReportData synthetic_report_data(const SyntheticReportOptions& o = {}) {
  static const char* const kNames[] = {
      "age",         "smoking",  "exercise",      "bmi",    "blood_pressure",
      "cholesterol", "diabetes", "heart_disease", "income", "stress"};
  const int n = o.variables;
  Rng rng = make_stream(o.seed, 0);
  boost::random::normal_distribution<double> normal(0.0, 1.0);
  auto uniform = [&] { return uniform01(rng); };

  ReportData d;
  d.title = "Synthetic posterior (test data)";
  d.source = "synthetic.h5";
  for (int v = 0; v < n; ++v) d.variables.push_back(v < 10 ? kNames[v] : "X" + std::to_string(v));

  // Edge probabilities from a hidden DAG over the index order: its edges are likely, their
  // reversals somewhat likely, everything else rare.
  d.edge_probability.assign(n, std::vector<double>(n, 0.0));
  for (int u = 0; u < n; ++u)
    for (int v = u + 1; v < n; ++v) {
      if (uniform() < std::min(0.3, 2.5 / n)) {  // about 1.25 edges per variable when large
        const double forward = 0.55 + 0.44 * uniform();
        d.edge_probability[u][v] = forward;
        d.edge_probability[v][u] = (1 - forward) * uniform();
      } else {
        d.edge_probability[u][v] = 0.08 * uniform() * uniform();
        d.edge_probability[v][u] = 0.08 * uniform() * uniform();
      }
    }
  if (o.with_cycle && n >= 3) {
    const int a = 0, b = n / 2, c = n - 1;
    for (auto [u, v] : {std::pair{a, b}, std::pair{b, c}, std::pair{c, a}}) {
      d.edge_probability[u][v] = 0.6;
      d.edge_probability[v][u] = 0.05;
    }
  }
  // A few pairs never sampled (as background knowledge would forbid): probability exactly 0.
  std::vector<std::pair<int, int>> constant;
  for (int k = 0; k < o.constant_features && k < n - 1; ++k) {
    const int u = n - 1 - k, v = (k * 3) % (n - 1);
    if (u == v || d.edge_probability[u][v] > 0.5) continue;
    d.edge_probability[u][v] = 0;
    constant.push_back({u, v});
  }
  for (int v = 0; v < n; ++v) d.edge_probability[v][v] = kUndefined;

  // Traces: each chain climbs from its own start to a level around -1500 (AR(1) noise); an
  // unconverged run has one chain stuck at another level.
  const std::int64_t thin = 50;
  for (int c = 0; c < o.chains; ++c) {
    ChainTrace t;
    const double level = (!o.converged && c == 0) ? -1528.0 : -1500.0;
    double noise = 0;
    for (int i = 0; i < o.draws; ++i) {
      noise = 0.9 * noise + 2.2 * normal(rng);
      const double climb = (120.0 + 40 * c) * std::exp(-i / 25.0);
      t.steps.push_back((i + 1) * thin);
      t.log_scores.push_back(level - climb + noise);
    }
    d.traces.push_back(std::move(t));
  }

  // Diagnostics per feature.
  auto diagnostics = [&](ReportFeature& f, bool fail) {
    f.rhat = 1.0 + std::abs(normal(rng)) * 0.0025;
    // Passing values stay clear of the threshold (ESS > 450), failing ones clear below it.
    f.ess_bulk = std::max(450.0, std::exp(std::log(1400.0) + 0.45 * normal(rng)));
    f.ess_tail = std::max(450.0, std::exp(std::log(1100.0) + 0.45 * normal(rng)));
    if (fail) {
      f.rhat = 1.02 + 0.1 * uniform();
      f.ess_bulk = 60 + 250 * uniform();
      f.ess_tail = 40 + 200 * uniform();
    }
    if (std::isfinite(f.probability) && f.kind != FeatureKind::kScore)
      f.mcse = std::sqrt(f.probability * (1 - f.probability) / f.ess_bulk);
  };
  auto is_constant = [&](int u, int v) {
    return std::find(constant.begin(), constant.end(), std::pair{u, v}) != constant.end();
  };
  int index = 0;
  for (FeatureKind kind : {FeatureKind::kEdge, FeatureKind::kAdjacency, FeatureKind::kAncestor})
    for (int u = 0; u < n; ++u)
      for (int v = 0; v < n; ++v) {
        if (u == v || (kind == FeatureKind::kAdjacency && v < u)) continue;
        ReportFeature f;
        f.kind = kind;
        f.from = u;
        f.to = v;
        const double p = d.edge_probability[u][v];
        f.probability = kind == FeatureKind::kEdge ? p
                        : kind == FeatureKind::kAdjacency
                            ? std::min(1.0, p + d.edge_probability[v][u])
                            : std::min(1.0, p + 0.1 * (1 - p) * uniform());
        if (kind == FeatureKind::kEdge && is_constant(u, v)) {
          f.mcse = 0;  // rhat and ESS stay undefined: constant across all draws
        } else {
          diagnostics(f, !o.converged && (index++ % 9 == 4));
        }
        d.features.push_back(f);
      }
  ReportFeature score;
  score.kind = FeatureKind::kScore;
  score.probability = -1500.4;
  diagnostics(score, !o.converged);
  score.mcse = 0.21;
  d.features.push_back(score);

  if (o.with_comparison) {
    Comparison cmp;
    cmp.label_a = "exact, cover-bounded class (k = 2)";
    cmp.label_b = "chains, all DAGs";
    for (int u = 0; u < n; ++u)
      for (int v = 0; v < n; ++v) {
        if (u == v) continue;
        const double p = d.edge_probability[u][v];
        ComparisonPair pair{
            u, v,          std::clamp(p + 0.03 * normal(rng) * p * (1 - p) * 4, 0.0, 1.0),
            p, kUndefined, 0.012 * std::sqrt(p * (1 - p)) * 4};
        cmp.pairs.push_back(pair);
      }
    d.comparison = cmp;
  }

  d.run.chains = o.chains;
  d.run.draws_per_chain = o.draws;
  d.run.steps_per_chain = o.draws * thin;
  d.run.acceptance = {{"add edge", 412000, 61800},
                      {"delete edge", 398000, 70900},
                      {"reverse edge", 205000, 18400},
                      {"REV (parent resampling)", 101000, 27300},
                      {"teleport", 20000, 4100}};
  d.run.regenerations = 4100;
  d.run.verdict = o.converged
                      ? "all features met the thresholds at step " + std::to_string(o.draws * thin)
                      : "step budget reached before the thresholds were met";
  d.run.extra = {{"score", "BDeu, equivalent sample size 1"}, {"seed", "7"}};
  d.cautions = {"Synthetic values: this report was made for testing and shows no real data."};
  return d;
}

}  // namespace covey::testing_util
