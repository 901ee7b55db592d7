// Feature estimates of a posterior from any covey result, and two of them compared
// (include/covey/analysis/posterior_compare.hpp).
#include "covey/analysis/posterior_compare.hpp"

#include <algorithm>
#include <cinttypes>
#include <cmath>
#include <cstdio>

#include "core/h5.hpp"
#include "covey/analysis/run_diagnostics.hpp"
#include "covey/chains/chain_run_file.hpp"
#include "covey/core/enum_names.hpp"
#include "covey/core/error.hpp"
#include "covey/core/proportion.hpp"
#include "covey/diagnostics/diagnostics.hpp"
#include "covey/exact/cover_draws.hpp"
#include "covey/exact/exact_posterior.hpp"
#include "covey/graph/cover_class.hpp"
#include "covey/graph/draws_file.hpp"
#include "covey/scores/score_io.hpp"

namespace covey {

namespace {
constexpr EnumName<PosteriorSource> kSourceNames[] = {{PosteriorSource::kChainRun, "chain-run"},
                                                      {PosteriorSource::kCoverDraws, "cover-draws"},
                                                      {PosteriorSource::kExactDraws, "exact-draws"},
                                                      {PosteriorSource::kExactTable, "exact"}};
}  // namespace

const char* to_string(PosteriorSource source) {
  return enum_name(kSourceNames, source);
}

namespace {

bool ends_with(const std::string& s, const std::string& suffix) {
  return s.size() >= suffix.size() &&
         s.compare(s.size() - suffix.size(), suffix.size(), suffix) == 0;
}

constexpr double kZ95 = 1.959963984540054;

}  // namespace

PosteriorSource detect_posterior_source(const std::string& path) {
  if (ends_with(path, ".tsv")) return PosteriorSource::kExactTable;
  if (!h5::is_hdf5(path))
    throw InputError(path + ": not a covey result (expected a chain run, draws, or a score table)");
  return h5::guard(path, [&] {
    H5::H5File file = h5::open_read(path);
    const std::string format =
        h5::has_attr(file, "format") ? h5::get_attr_string(file, "format") : std::string();
    const std::string kind =
        h5::has_attr(file, "kind") ? h5::get_attr_string(file, "kind") : std::string();
    if (format == kChainRunFormat || format == kChainManifestFormat)
      return PosteriorSource::kChainRun;
    if (format == "covey-scores") return PosteriorSource::kExactTable;
    if (format == "covey-draws")  // one layout for all draws; the kind names the engine
      return kind == "cover-draws" ? PosteriorSource::kCoverDraws : PosteriorSource::kExactDraws;
    throw InputError(path + ": an HDF5 file, but not a covey chain run, draws or score table");
  });
}

// ---- One posterior's estimates ---------------------------------------------------------------

struct PosteriorEstimate::Impl {
  PosteriorSource source = PosteriorSource::kExactTable;
  std::string label;
  std::vector<std::string> variables;
  std::uint64_t fingerprint = 0;
  int cover_bound = -1;
  int teleport_cover = -1;
  std::optional<LogWeight> log_weight;
  int n = 0;
  // Feature estimates: [from * n + to] for edges and ancestors, [a * n + b] (a < b) adjacencies.
  std::vector<Estimate> edge, adjacency, ancestor;
  bool has_ancestors = false;
  // What the mass of D_k is computed from.
  std::vector<Dag> dags;              // draws (exact draws of a table, or the file's)
  std::unique_ptr<RunFeatures> run;   // chain run
  std::unique_ptr<ScoreTable> table;  // exact table
  CompareOptions options;
};

PosteriorEstimate::PosteriorEstimate(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
PosteriorEstimate::~PosteriorEstimate() = default;
PosteriorEstimate::PosteriorEstimate(PosteriorEstimate&&) noexcept = default;
PosteriorEstimate& PosteriorEstimate::operator=(PosteriorEstimate&&) noexcept = default;

// The loaders below are free functions over Impl; this friend names the private type for them.
struct PosteriorEstimateLoaders {
  using Impl = PosteriorEstimate::Impl;
};

namespace {

using Impl = PosteriorEstimateLoaders::Impl;

void size_features(Impl& p) {
  const std::size_t cells = std::size_t(p.n) * std::size_t(p.n);
  p.edge.assign(cells, {});
  p.adjacency.assign(cells, {});
  p.ancestor.assign(cells, {});
}

// Frequencies over independent draws with binomial standard errors sqrt(p (1 - p) / N).
void estimates_from_draws(Impl& p, const std::vector<Dag>& dags, bool ancestors) {
  if (dags.empty()) throw InputError(p.label + ": holds no draws");
  const int n = p.n;
  std::vector<std::uint64_t> edge(std::size_t(n) * n), adj(std::size_t(n) * n),
      anc(std::size_t(n) * n);
  for (const Dag& g : dags) {
    for (int v = 0; v < n; ++v)
      for (int u = 0; u < n; ++u)
        if (g.has_edge(u, v)) {
          ++edge[std::size_t(u) * n + v];
          ++adj[std::size_t(std::min(u, v)) * n + std::max(u, v)];
        }
    if (!ancestors) continue;
    const std::vector<std::uint64_t> a = ancestor_masks(g);
    const std::size_t words = std::size_t(g.words_per_node());
    for (int v = 0; v < n; ++v)
      for (std::size_t w = 0; w < words; ++w)
        for (std::uint64_t m = a[std::size_t(v) * words + w]; m; m &= m - 1)
          ++anc[(64 * w + std::size_t(std::countr_zero(m))) * n + v];
  }
  const double count = static_cast<double>(dags.size());
  const auto binomial = [count](std::uint64_t k) {
    const double q = static_cast<double>(k) / count;
    return Estimate{q, std::sqrt(q * (1 - q) / count)};
  };
  for (std::size_t i = 0; i < edge.size(); ++i) {
    p.edge[i] = binomial(edge[i]);
    p.adjacency[i] = binomial(adj[i]);
    p.ancestor[i] = binomial(anc[i]);
  }
  p.has_ancestors = ancestors;
}

std::unique_ptr<Impl> load_exact_table(const std::string& path, const CompareOptions& o) {
  auto p = std::make_unique<Impl>();
  p->source = PosteriorSource::kExactTable;
  p->table = std::make_unique<ScoreTable>(load_scores(path));
  const ScoreTable& table = *p->table;
  p->n = table.num_variables();
  for (int v = 0; v < p->n; ++v) p->variables.push_back(table.name(v));
  p->fingerprint = table.fingerprint();
  p->label = "exact, all DAGs (" + path + ")";
  ExactOptions eo;
  eo.limits.max_bytes = o.memory_limit;
  const ExactEngine engine(table, eo);
  const ExactPosterior& post = engine.posterior();
  size_features(*p);
  for (int u = 0; u < p->n; ++u)
    for (int v = 0; v < p->n; ++v) {
      if (u == v) continue;
      const std::size_t i = std::size_t(u) * p->n + v;
      // The engine keeps every probability within [0, 1] (exact_posterior.hpp).
      p->edge[i] = {post.edge(u, v), 0.0};
      p->ancestor[i] = {post.ancestor(u, v), 0.0};
      if (u < v) p->adjacency[i] = {post.adjacency(u, v), 0.0};
    }
  p->has_ancestors = true;
  p->log_weight = PosteriorEstimate::LogWeight{post.log_total_weight, post.log_total_weight,
                                               post.log_total_weight};
  p->options = o;
  return p;
}

// The fields every draws file has (CoverDrawsFile or DrawsFile), then the frequencies.
template <class File>
std::unique_ptr<Impl> from_draws(PosteriorSource source, File file, std::string label,
                                 const CompareOptions& o) {
  auto p = std::make_unique<Impl>();
  p->source = source;
  p->variables = file.variables;
  p->n = static_cast<int>(file.variables.size());
  p->fingerprint = file.table_fingerprint;
  p->label = std::move(label);
  size_features(*p);
  estimates_from_draws(*p, file.dags, o.kinds.ancestors);
  p->dags = std::move(file.dags);
  p->options = o;
  return p;
}

std::unique_ptr<Impl> load_cover_draws(const std::string& path, const CompareOptions& o) {
  CoverDrawsFile file = read_cover_draws(path);
  const int k = file.cover_bound;
  const auto weight = file.total_weight;
  std::string label = "exact draws from D_" + std::to_string(k) + " (" + path + ", " +
                      std::to_string(file.dags.size()) + " draws)";
  auto p = from_draws(PosteriorSource::kCoverDraws, std::move(file), std::move(label), o);
  p->cover_bound = k;
  p->log_weight = PosteriorEstimate::LogWeight{weight.log_estimate, weight.log_lo, weight.log_hi};
  return p;
}

std::unique_ptr<Impl> load_exact_draws(const std::string& path, const CompareOptions& o) {
  DrawsFile file = read_draws(path);
  std::string label =
      "exact draws, all DAGs (" + path + ", " + std::to_string(file.dags.size()) + " draws)";
  return from_draws(PosteriorSource::kExactDraws, std::move(file), std::move(label), o);
}

std::unique_ptr<Impl> load_chain_runs(const std::vector<std::string>& paths,
                                      const CompareOptions& o) {
  auto p = std::make_unique<Impl>();
  p->source = PosteriorSource::kChainRun;
  const std::vector<ChainRun> runs = open_runs(paths);
  p->variables = runs.front().variables();
  p->n = runs.front().num_variables();
  p->fingerprint = runs.front().table_fingerprint();
  p->teleport_cover = runs.front().options().teleport_cover;
  p->run = std::make_unique<RunFeatures>(runs, o.kinds.ancestors);
  const RunFeatures& draws = *p->run;
  std::string files;
  for (const std::string& path : paths) files += (files.empty() ? "" : ", ") + path;
  p->label = "chain run (" + files + ", " + std::to_string(draws.chains()) + " chains x " +
             std::to_string(draws.iterations()) + " draws)";
  FeatureKinds kinds = o.kinds;
  kinds.score = false;
  const std::vector<FeatureId> features = list_features(p->n, kinds);
  const RunDiagnostics d = diagnose_run(draws, features);
  size_features(*p);
  for (std::size_t i = 0; i < features.size(); ++i) {
    const FeatureId& f = features[i];
    // The MCSE of a feature constant in every draw is undefined (NaN): its se stays unknown.
    const Estimate e{d.summaries[i].mean, d.summaries[i].mcse};
    const std::size_t cell = std::size_t(f.from) * p->n + f.to;
    if (f.kind == FeatureKind::kEdge) p->edge[cell] = e;
    if (f.kind == FeatureKind::kAdjacency) p->adjacency[cell] = e;
    if (f.kind == FeatureKind::kAncestor) p->ancestor[cell] = e;
  }
  p->has_ancestors = o.kinds.ancestors;
  p->options = o;
  return p;
}

PosteriorEstimate::Mass mass_from_draws(const std::vector<Dag>& dags, int k,
                                        const std::string& method) {
  const ClassMass m =
      class_mass_from_draws(dags, [k](const Dag& d) { return in_cover_class(d, k); });
  const double count = static_cast<double>(m.draws);
  return {m.estimate, std::sqrt(m.estimate * (1 - m.estimate) / count), m.lo, m.hi, method};
}

}  // namespace

PosteriorEstimate PosteriorEstimate::load(const std::vector<std::string>& paths,
                                          const CompareOptions& options) {
  if (paths.empty()) throw InputError("compare: no file given");
  const PosteriorSource source = detect_posterior_source(paths.front());
  if (paths.size() > 1) {
    for (const std::string& path : paths)
      if (detect_posterior_source(path) != PosteriorSource::kChainRun)
        throw InputError(path + ": only chain runs can be taken together");
  }
  switch (source) {
    case PosteriorSource::kChainRun:
      return PosteriorEstimate(load_chain_runs(paths, options));
    case PosteriorSource::kCoverDraws:
      return PosteriorEstimate(load_cover_draws(paths.front(), options));
    case PosteriorSource::kExactDraws:
      return PosteriorEstimate(load_exact_draws(paths.front(), options));
    case PosteriorSource::kExactTable:
      return PosteriorEstimate(load_exact_table(paths.front(), options));
  }
  throw Error("unreachable posterior source");
}

PosteriorSource PosteriorEstimate::source() const {
  return impl_->source;
}
const std::string& PosteriorEstimate::label() const {
  return impl_->label;
}
const std::vector<std::string>& PosteriorEstimate::variables() const {
  return impl_->variables;
}
std::uint64_t PosteriorEstimate::table_fingerprint() const {
  return impl_->fingerprint;
}
int PosteriorEstimate::cover_bound() const {
  return impl_->cover_bound;
}
int PosteriorEstimate::teleport_cover() const {
  return impl_->teleport_cover;
}
std::optional<PosteriorEstimate::LogWeight> PosteriorEstimate::log_total_weight() const {
  return impl_->log_weight;
}

Estimate PosteriorEstimate::feature(const FeatureId& id) const {
  const int n = impl_->n;
  if (id.from < 0 || id.to < 0 || id.from >= n || id.to >= n || id.from == id.to)
    throw Error("PosteriorEstimate: feature out of range");
  const std::size_t cell = std::size_t(id.from) * n + id.to;
  switch (id.kind) {
    case FeatureKind::kEdge:
      return impl_->edge[cell];
    case FeatureKind::kAdjacency:
      return impl_->adjacency[std::size_t(std::min(id.from, id.to)) * n + std::max(id.from, id.to)];
    case FeatureKind::kAncestor:
      if (!impl_->has_ancestors) throw Error("PosteriorEstimate: ancestors not estimated");
      return impl_->ancestor[cell];
    case FeatureKind::kScore:
      break;
  }
  throw Error("PosteriorEstimate: the log score is not compared");
}

PosteriorEstimate::Mass PosteriorEstimate::cover_class_mass(int k) const {
  if (k < 0) throw OptionError("{k}: the cover bound must be at least 0");
  switch (impl_->source) {
    case PosteriorSource::kCoverDraws:
      if (k >= impl_->cover_bound) return {1.0, 0.0, 1.0, 1.0, "cover-bounded draws"};
      return mass_from_draws(
          impl_->dags, k, "cover-bounded draws (of D_" + std::to_string(impl_->cover_bound) + ")");
    case PosteriorSource::kExactDraws:
      return mass_from_draws(impl_->dags, k, "exact draws");
    case PosteriorSource::kChainRun: {
      const RunFeatures& draws = *impl_->run;
      std::vector<double> inside(std::size_t(draws.chains()) * draws.iterations());
      draws.in_cover_class(k, inside);
      const FeatureSummary s = summarize({inside, draws.chains(), draws.iterations()});
      // Every draw inside (or none): the MCSE is undefined, not zero.
      Mass m{s.mean, s.mcse, std::nan(""), std::nan(""), "chain run (MCSE)"};
      if (std::isfinite(s.mcse)) {
        m.lo = std::fmax(0.0, s.mean - kZ95 * s.mcse);
        m.hi = std::fmin(1.0, s.mean + kZ95 * s.mcse);
      }
      return m;
    }
    case PosteriorSource::kExactTable: {
      const ScoreTable& table = *impl_->table;
      std::vector<Dag> draws;
      if (table.num_variables() > kCoverMassEnumerationMax) {
        ExactOptions eo;
        eo.features = false;
        eo.draws = true;
        eo.limits.max_bytes = impl_->options.memory_limit;
        draws = ExactEngine(table, eo).draw_many(impl_->options.exact_draws, impl_->options.seed);
      }
      const ClassMass m = covey::cover_class_mass(table, k, draws);
      if (m.method == "enumeration") return {m.estimate, 0.0, m.lo, m.hi, "enumeration"};
      const double count = static_cast<double>(m.draws);
      return {m.estimate, std::sqrt(m.estimate * (1 - m.estimate) / count), m.lo, m.hi,
              "exact draws (" + std::to_string(m.draws) + ")"};
    }
  }
  throw Error("unreachable posterior source");
}

// ---- Two posteriors compared -------------------------------------------------------------

namespace {

double combined_se(const Estimate& a, const Estimate& b) {
  if (std::isnan(a.se) || std::isnan(b.se)) return std::nan("");
  return std::sqrt(a.se * a.se + b.se * b.se);
}

bool unrestricted(const PosteriorEstimate& p) {
  return p.source() != PosteriorSource::kCoverDraws;
}

}  // namespace

PosteriorComparison compare_posteriors(const PosteriorEstimate& a, const PosteriorEstimate& b,
                                       const CompareOptions& options) {
  if (a.variables() != b.variables() || a.table_fingerprint() != b.table_fingerprint())
    throw InputError(
        "compare: the two results were made from different score tables "
        "(fingerprints " +
        format_fingerprint(a.table_fingerprint()) + " and " +
        format_fingerprint(b.table_fingerprint()) + ")");
  PosteriorComparison out;
  out.label_a = a.label();
  out.label_b = b.label();
  out.variables = a.variables();
  FeatureKinds kinds = options.kinds;
  kinds.score = false;
  for (const FeatureId& id : list_features(static_cast<int>(a.variables().size()), kinds)) {
    FeatureDifference d;
    d.id = id;
    d.a = a.feature(id);
    d.b = b.feature(id);
    d.diff = d.b.value - d.a.value;
    d.se = combined_se(d.a, d.b);
    out.features.push_back(d);
  }
  std::stable_sort(out.features.begin(), out.features.end(),
                   [](const FeatureDifference& x, const FeatureDifference& y) {
                     return std::fabs(x.diff) > std::fabs(y.diff);
                   });
  // The mass of D_k under the unrestricted side; k from the cover-bounded side, else {cover},
  // else the class a teleporting chain run drew its teleports from.
  const PosteriorEstimate* cover_side = a.source() == PosteriorSource::kCoverDraws   ? &a
                                        : b.source() == PosteriorSource::kCoverDraws ? &b
                                                                                     : nullptr;
  const int k = cover_side                ? cover_side->cover_bound()
                : options.cover >= 0      ? options.cover
                : a.teleport_cover() >= 0 ? a.teleport_cover()
                                          : b.teleport_cover();
  const PosteriorEstimate* wide = nullptr;
  std::string side;
  // Prefer the chain run (the quantity docs/mathematics.md section 7 estimates), then an exact
  // side.
  for (const auto& [p, name] : {std::pair{&a, "a"}, std::pair{&b, "b"}})
    if (unrestricted(*p) && (!wide || p->source() == PosteriorSource::kChainRun)) {
      wide = p;
      side = name;
    }
  if (k >= 0 && wide) {
    out.mass_in_cover_class = PosteriorComparison::MassInCover{k, side, wide->cover_class_mass(k)};
    const auto& mass = out.mass_in_cover_class->mass;
    if (cover_side && mass.estimate > 0) {
      // Delta method: var(log Z_k) from its 95% interval, var(log P) = (se_P / P)^2.
      const auto zk = *cover_side->log_total_weight();
      const double se_log_zk = (zk.hi - zk.lo) / (2 * kZ95);
      const double se_log_p = mass.se / mass.estimate;
      PosteriorComparison::LogTotalWeightAll all;
      all.estimate = zk.estimate - std::log(mass.estimate);
      const double se = std::sqrt(se_log_zk * se_log_zk + se_log_p * se_log_p);
      all.lo = all.estimate - kZ95 * se;
      all.hi = all.estimate + kZ95 * se;
      if (wide->source() == PosteriorSource::kExactTable && wide->log_total_weight())
        all.exact = wide->log_total_weight()->estimate;
      out.log_total_weight_all = all;
    }
  }
  return out;
}

}  // namespace covey
