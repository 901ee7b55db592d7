#include "covey/report/report.hpp"

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>

#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/version.hpp"
#include "covey/report/consensus_graph.hpp"
#include "covey/report/plot.hpp"

namespace covey {

const char* const kCausalCaution =
    "Learned structure shows statistical dependence, not proven cause. Decisions affecting "
    "safety or health rest with qualified people and local rules.";

std::string feature_label(const ReportFeature& f, const std::vector<std::string>& names) {
  return feature_label(FeatureId{f.kind, f.from, f.to}, names);
}

namespace {

// --- thresholds --------------------------------------------------------------------------------

Thresholds thresholds_of(const ReportData& d) {
  return Thresholds{d.rhat_threshold, d.ess_threshold};
}
bool rhat_fails(double rhat, const ReportData& d) {
  return assess_rhat(rhat, thresholds_of(d)) == FeatureStatus::kFail;
}
bool ess_fails(double ess, const ReportData& d) {
  return assess_ess(ess, thresholds_of(d)) == FeatureStatus::kFail;
}

}  // namespace

namespace {

// The features as the diagnostics layer sees them, for its verdict and its worst-first order.
std::vector<FeatureSummary> summaries_of(const ReportData& data) {
  std::vector<FeatureSummary> summaries;
  summaries.reserve(data.features.size());
  for (const ReportFeature& f : data.features)
    summaries.push_back({f.probability, f.rhat, f.ess_bulk, f.ess_tail, kUndefined, f.mcse});
  return summaries;
}

}  // namespace

ConvergenceVerdict assess_convergence(const ReportData& data) {
  return judge(summaries_of(data), thresholds_of(data));
}

VerdictText report_verdict_text(const ReportData& data) {
  VerdictContext context;
  context.chains = data.run.chains;
  context.draws = static_cast<std::size_t>(std::max<std::int64_t>(
      0, data.run.draws_per_chain * static_cast<std::int64_t>(data.run.chains)));
  for (const ReportFeature& f : data.features)
    if (f.kind != FeatureKind::kScore && mcse_unreliable(f.probability, context.draws))
      ++context.unreliable_mcse;
  return verdict_text(assess_convergence(data), thresholds_of(data), context);
}

namespace {

// --- validation --------------------------------------------------------------------------------

void validate(const ReportData& d) {
  const int n = static_cast<int>(d.variables.size());
  auto in_range = [&](int i) { return i >= 0 && i < n; };
  if (!(d.rhat_threshold > 1) || !(d.ess_threshold > 0))
    throw InputError("report: thresholds must be R-hat > 1 and ESS > 0");
  if (!(d.consensus_threshold >= 0 && d.consensus_threshold < 1))
    throw InputError("report: consensus threshold must lie in [0, 1)");
  for (std::size_t i = 0; i < d.features.size(); ++i) {
    const auto& f = d.features[i];
    if (f.kind != FeatureKind::kScore && (!in_range(f.from) || !in_range(f.to) || f.from == f.to))
      throw InputError("report: feature " + std::to_string(i) + " (" + to_string(f.kind) +
                       ") names variables " + std::to_string(f.from) + " and " +
                       std::to_string(f.to) + ", outside 0.." + std::to_string(n - 1) +
                       " or equal");
  }
  for (const FeatureTrace& t : d.feature_traces) {
    if (t.feature >= d.features.size())
      throw InputError("report: a feature trace names feature " + std::to_string(t.feature) +
                       " of " + std::to_string(d.features.size()));
    for (const FeatureTrace::Chain& c : t.chains)
      if (c.steps.size() != c.running_mean.size())
        throw InputError("report: a feature trace has " + std::to_string(c.steps.size()) +
                         " step numbers but " + std::to_string(c.running_mean.size()) + " values");
  }
  for (std::size_t c = 0; c < d.traces.size(); ++c)
    if (d.traces[c].steps.size() != d.traces[c].log_scores.size())
      throw InputError("report: chain " + std::to_string(c + 1) + " has " +
                       std::to_string(d.traces[c].steps.size()) + " step numbers but " +
                       std::to_string(d.traces[c].log_scores.size()) + " log scores");
  if (!d.edge_probability.empty()) {
    if (d.edge_probability.size() != d.variables.size())
      throw InputError("report: edge-probability matrix has " +
                       std::to_string(d.edge_probability.size()) + " rows for " +
                       std::to_string(n) + " variables");
    for (const auto& row : d.edge_probability)
      if (row.size() != d.variables.size())
        throw InputError("report: an edge-probability row has " + std::to_string(row.size()) +
                         " entries for " + std::to_string(n) + " variables");
  }
  if (d.comparison)
    for (const auto& p : d.comparison->pairs)
      if (!in_range(p.from) || !in_range(p.to))
        throw InputError("report: comparison names the edge " + std::to_string(p.from) + " -> " +
                         std::to_string(p.to) + ", outside 0.." + std::to_string(n - 1));
}

// An existing folder is replaced only when it is empty or holds an earlier covey report.
constexpr const char* kGeneratorMeta = "<meta name=\"generator\" content=\"covey report";

// --- text formatting ---------------------------------------------------------------------------

std::string fixed(double v, int decimals) {
  char text[64];
  std::snprintf(text, sizeof text, "%.*f", decimals, v);
  return text;
}

std::string grouped(std::int64_t v) {
  std::string digits = std::to_string(v < 0 ? -v : v), out;
  for (std::size_t i = 0; i < digits.size(); ++i) {
    if (i > 0 && (digits.size() - i) % 3 == 0) out += ',';
    out += digits[i];
  }
  return v < 0 ? "\u2212" + out : out;
}

constexpr const char* kUndefinedCell =
    "<span class=\"undef\" title=\"undefined: the feature is constant across all draws\">"
    "\u2014</span>";

std::string rhat_text(double v) {
  if (std::isnan(v)) return "undefined";
  if (std::isinf(v)) return "\u221e";
  return fixed(v, 3);
}

std::string ess_text(double v) {
  if (std::isnan(v)) return "undefined";
  if (std::isinf(v)) return "\u221e";
  return grouped(static_cast<std::int64_t>(std::llround(v)));
}

std::string mcse_text(double v) {
  if (std::isnan(v)) return "\u2014";
  char text[32];
  std::snprintf(text, sizeof text, v == 0 ? "0" : "%#.2g", v);
  return text;
}

// "1 feature is", "3 features are".
std::string counted(std::size_t count, const char* one, const char* many) {
  return grouped(static_cast<std::int64_t>(count)) + " " + (count == 1 ? one : many);
}

std::string percent(double v) {
  return fixed(100 * v, v < 0.001 ? 2 : 1) + "%";
}

// --- figures -----------------------------------------------------------------------------------

constexpr int kPageFigureWidth = 930;      // content width of a card on a wide screen
constexpr int kMaxIsolatedDrawn = 12;      // more variables without an edge are listed, not drawn
constexpr std::size_t kTracePoints = 400;  // points per chain in the trace plot

struct Figure {
  std::string id, heading;
  std::string png;                                         // shown
  std::vector<std::pair<std::string, std::string>> links;  // (label, file)
  int width = 0, height = 0;                               // CSS px
  std::string alt, caption_html;
};

std::pair<int, int> png_dimensions(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::array<unsigned char, 24> header{};
  in.read(reinterpret_cast<char*>(header.data()), header.size());
  if (in.gcount() != 24 || header[1] != 'P' || header[2] != 'N' || header[3] != 'G')
    throw Error(path + ": not a PNG image");
  auto be32 = [&](int at) {
    return (header[at] << 24) | (header[at + 1] << 16) | (header[at + 2] << 8) | header[at + 3];
  };
  return {be32(16), be32(20)};
}

void write_both(const auto& plot, const std::string& dir, const std::string& base,
                const plot::FigureSize& size) {
  plot::write_plot(plot, dir + "/" + base + ".png", size);
  plot::write_plot(plot, dir + "/" + base + ".svg", size);
}

Figure trace_figure(const ReportData& d, const std::string& dir) {
  plot::LinePlot lp;
  lp.title = "Log score of the sampled DAGs, by chain";
  lp.x_label = "step";
  lp.y_label = "log score";
  // Thousands of draws per chain drawn as lines fill the plot as a solid band: each chain is
  // shown by the means of at most kTracePoints consecutive blocks of its draws, which keeps a
  // trend, a climb from the start and a chain stuck apart visible.
  std::size_t block = 1;
  for (const ChainTrace& t : d.traces)
    block = std::max(block, (t.log_scores.size() + kTracePoints - 1) / kTracePoints);
  for (std::size_t c = 0; c < d.traces.size(); ++c) {
    plot::Series s;
    s.name = "chain " + std::to_string(c + 1);
    const ChainTrace& t = d.traces[c];
    for (std::size_t at = 0; at < t.log_scores.size(); at += block) {
      const std::size_t end = std::min(t.log_scores.size(), at + block);
      double sum = 0;
      for (std::size_t i = at; i < end; ++i) sum += t.log_scores[i];
      s.x.push_back(static_cast<double>(t.steps[end - 1]));
      s.y.push_back(sum / static_cast<double>(end - at));
    }
    lp.series.push_back(std::move(s));
  }
  if (block > 1)
    lp.title = "Log score of the sampled DAGs, by chain (means of " + std::to_string(block) +
               " consecutive draws)";
  const plot::FigureSize size{900, 380};
  write_both(lp, dir, "trace", size);
  Figure f{"trace",
           "Trace of the log score",
           "trace.png",
           {{"SVG", "trace.svg"}},
           size.width,
           size.height,
           "Trace plot of the log score of each chain against the step number",
           ""};
  f.caption_html =
      "<b>What to look for:</b> the chains overlap and wander around the same level, with no "
      "trend and no chain stuck apart from the others. An early climb is a chain leaving its "
      "starting graph.";
  if (block > 1)
    f.caption_html += " Each point is the mean log score of " + std::to_string(block) +
                      " consecutive kept draws of its chain, so that the chains stay apart.";
  return f;
}

Figure feature_trace_figure(const ReportData& d, const std::string& dir, std::size_t k) {
  const FeatureTrace& t = d.feature_traces[k];
  const ReportFeature& feature = d.features[t.feature];
  const std::string label = feature_label(feature, d.variables);
  plot::LinePlot lp;
  lp.title = "Running probability of " + label + ", by chain";
  lp.x_label = "step";
  lp.y_label = "probability so far";
  for (std::size_t c = 0; c < t.chains.size(); ++c) {
    plot::Series s;
    s.name = "chain " + std::to_string(c + 1);
    s.x.assign(t.chains[c].steps.begin(), t.chains[c].steps.end());
    s.y = t.chains[c].running_mean;
    lp.series.push_back(std::move(s));
  }
  const plot::FigureSize size{900, 300};
  const std::string base = "feature-trace-" + std::to_string(k + 1);
  write_both(lp, dir, base, size);
  Figure f{base,
           "Worst feature " + std::to_string(k + 1) + " by chain",
           base + ".png",
           {{"SVG", base + ".svg"}},
           size.width,
           size.height,
           "Running probability of " + label + " in each chain against the step number",
           ""};
  f.caption_html =
      "<b>What to look for:</b> the chains' lines meet at one value. Lines that stay apart are "
      "chains that disagree about <b>" +
      plot::markup_escape(label) + "</b> (R-hat " + rhat_text(feature.rhat) + ", bulk ESS " +
      ess_text(feature.ess_bulk) +
      "); a line that jumps in steps is a chain that rarely changes "
      "this feature. Each point is the share of the chain's draws so far that hold it.";
  return f;
}

Figure rhat_figure(const ReportData& d, const std::string& dir, const ConvergenceVerdict& v) {
  plot::StripPlot sp;
  sp.title = "R-hat of every feature";
  sp.x_label = "R-hat (max of rank-normalised split and folded)";
  sp.threshold = d.rhat_threshold;
  sp.above_is_bad = true;
  sp.threshold_label = "R-hat " + fixed(d.rhat_threshold, 2);
  static constexpr std::array<std::pair<FeatureKind, const char*>, 4> kRows = {
      {{FeatureKind::kEdge, "edges"},
       {FeatureKind::kAdjacency, "adjacencies"},
       {FeatureKind::kAncestor, "ancestors"},
       {FeatureKind::kScore, "log score"}}};
  for (const auto& [kind, name] : kRows) {
    plot::StripRow row{name, {}};
    for (const auto& f : d.features)
      if (f.kind == kind) row.values.push_back(f.rhat);
    if (!row.values.empty()) sp.rows.push_back(std::move(row));
  }
  const plot::FigureSize size{
      900, 130 + 58 * static_cast<int>(std::max<std::size_t>(sp.rows.size(), 1))};
  write_both(sp, dir, "rhat", size);
  Figure f{"rhat",
           "R-hat",
           "rhat.png",
           {{"SVG", "rhat.svg"}},
           size.width,
           size.height,
           "Strip plot of R-hat per feature, by kind, with the threshold line",
           ""};
  f.caption_html = "<b>What to look for:</b> every dot left of the dashed line at " +
                   fixed(d.rhat_threshold, 2) +
                   ". Each dot is one feature; dots in vermillion fail. ";
  if (v.undefined > 0)
    f.caption_html += counted(v.undefined, "feature is", "features are") +
                      " constant across all draws, so R-hat is undefined there; such features "
                      "are counted at the right, not drawn.";
  return f;
}

Figure ess_figure(const ReportData& d, const std::string& dir) {
  plot::StripPlot sp;
  sp.title = "Effective sample size of every feature";
  sp.x_label = "effective sample size (log scale)";
  sp.x_scale = plot::Scale::kLog10;
  sp.threshold = d.ess_threshold;
  sp.above_is_bad = false;
  sp.threshold_label = "ESS " + fixed(d.ess_threshold, 0);
  plot::StripRow bulk{"bulk ESS", {}}, tail{"tail ESS", {}};
  for (const auto& f : d.features) {
    bulk.values.push_back(f.ess_bulk);
    tail.values.push_back(f.ess_tail);
  }
  sp.rows = {bulk, tail};
  const plot::FigureSize size{900, 130 + 2 * 64};
  write_both(sp, dir, "ess", size);
  Figure f{"ess",
           "Effective sample size",
           "ess.png",
           {{"SVG", "ess.svg"}},
           size.width,
           size.height,
           "Strip plot of bulk and tail effective sample size per feature",
           ""};
  f.caption_html = "<b>What to look for:</b> every dot right of the dashed line at " +
                   fixed(d.ess_threshold, 0) +
                   ". Bulk ESS measures how well the centre of each feature's distribution is "
                   "estimated, tail ESS its 5% and 95% quantiles.";
  return f;
}

Figure heat_map_figure(const ReportData& d, const std::string& dir) {
  plot::HeatMap hm;
  hm.title = "Posterior probability of each directed edge";
  hm.row_title = "from (parent)";
  hm.column_title = "to (child)";
  hm.colour_title = "P(from \u2192 to)";
  hm.row_names = hm.column_names = d.variables;
  hm.values = d.edge_probability;
  for (std::size_t v = 0; v < hm.values.size(); ++v) hm.values[v][v] = plot::kNaN;
  const plot::FigureSize size = plot::preferred_size(hm);
  write_both(hm, dir, "edges", size);
  Figure f{"edges",
           "Edge probabilities",
           "edges.png",
           {{"SVG", "edges.svg"}},
           size.width,
           size.height,
           "Heat map of the posterior probability of every directed edge",
           ""};
  f.caption_html =
      "<b>How to read it:</b> the cell in row <i>u</i>, column <i>v</i> is the posterior "
      "probability of the edge <i>u</i> \u2192 <i>v</i>. Dark cells are edges the data "
      "support; two mid-tone cells mirrored across the diagonal mean the data support a link "
      "but not its direction.";
  return f;
}

Figure consensus_figure(const ReportData& d, const std::string& dir, const ConsensusGraph& g) {
  // Top to bottom reads most naturally; a graph too wide for the page is laid out left to
  // right instead when that makes it narrower (wide, shallow DAGs), so the page scrolls down
  // rather than sideways.
  ConsensusDotOptions options;
  options.max_isolated_drawn = kMaxIsolatedDrawn;
  const double dpi = 192;
  const double shrink = 96.0 / dpi;  // shown at 96 px per inch, the size graphviz intends
  const std::string png = dir + "/consensus.png", sideways_png = dir + "/consensus-lr.png";
  std::string dot = consensus_dot(g, options);
  render_dot(dot, png, dpi);
  auto [w, h] = png_dimensions(png);
  if (w * shrink > kPageFigureWidth) {
    options.left_to_right = true;
    const std::string sideways = consensus_dot(g, options);
    render_dot(sideways, sideways_png, dpi);
    const auto [w_lr, h_lr] = png_dimensions(sideways_png);
    if (w_lr < w) {
      dot = sideways;
      w = w_lr;
      h = h_lr;
      std::filesystem::rename(sideways_png, png);
    } else {
      std::filesystem::remove(sideways_png);
    }
  }
  write_text_file_atomically(dir + "/consensus.dot", dot);
  render_dot(dot, dir + "/consensus.svg");
  Figure f{
      "consensus",
      "Consensus graph",
      "consensus.png",
      {{"SVG", "consensus.svg"}, {"DOT", "consensus.dot"}},
      static_cast<int>(std::lround(w * shrink)),
      static_cast<int>(std::lround(h * shrink)),
      "Consensus graph: edges with posterior probability above " + fixed(d.consensus_threshold, 2),
      ""};
  f.caption_html = "<b>How to read it:</b> the edges with posterior probability above " +
                   fixed(d.consensus_threshold, 2) +
                   ", each labelled with it; thicker means more probable. It summarises the "
                   "edge marginals one at a time and need not be the most probable DAG. Dashed "
                   "boxes are variables without a consensus edge.";
  if (!g.undirected.empty())
    f.caption_html +=
        " Dashed orange lines without arrowheads are links whose direction is uncertain: the "
        "two variables are adjacent with the probability shown, but neither direction alone "
        "passes the threshold.";
  if (g.edges.empty()) f.caption_html += " <b>No edge passes the threshold.</b>";
  const std::vector<int> isolated = isolated_variables(g);
  if (static_cast<int>(isolated.size()) > kMaxIsolatedDrawn) {
    f.caption_html += " Not drawn, as they have no consensus edge: ";
    for (std::size_t i = 0; i < isolated.size(); ++i)
      f.caption_html += (i ? ", " : "") + plot::markup_escape(d.variables[isolated[i]]);
    f.caption_html += ".";
  }
  if (g.has_cycle)
    f.caption_html +=
        " <b class=\"warn\">The consensus has a directed cycle</b> (edges in vermillion): "
        "each of its edges is probable on its own, but no single DAG holds them all, so the "
        "direction of these links is not settled by the data.";
  return f;
}

Figure comparison_figure(const ReportData& d, const std::string& dir) {
  const Comparison& cmp = *d.comparison;
  plot::ScatterPlot sp;
  sp.title = "Edge probabilities under two posteriors";
  sp.x_label = cmp.label_a;
  sp.y_label = cmp.label_b;
  bool any_error = false;
  std::size_t differ = 0;
  const ComparisonPair* largest = nullptr;
  for (const auto& p : cmp.pairs) {
    plot::ScatterPoint pt;
    pt.x = p.a;
    pt.y = p.b;
    pt.x_error = 2 * p.se_a;
    pt.y_error = 2 * p.se_b;
    any_error = any_error || std::isfinite(p.se_a) || std::isfinite(p.se_b);
    pt.label = feature_label(FeatureId{FeatureKind::kEdge, p.from, p.to}, d.variables);
    sp.points.push_back(pt);
    if (!std::isfinite(p.a) || !std::isfinite(p.b)) continue;
    if (!largest || std::abs(p.b - p.a) > std::abs(largest->b - largest->a)) largest = &p;
    const double se =
        std::hypot(std::isfinite(p.se_a) ? p.se_a : 0.0, std::isfinite(p.se_b) ? p.se_b : 0.0);
    if (se > 0 && std::abs(p.b - p.a) > 2 * se) ++differ;
  }
  const plot::FigureSize size{640, 600};
  write_both(sp, dir, "comparison", size);
  Figure f{"comparison",
           cmp.title.empty() ? "Edge probabilities: " + cmp.label_a + " against " + cmp.label_b
                             : cmp.title,
           "comparison.png",
           {{"SVG", "comparison.svg"}},
           size.width,
           size.height,
           "Scatter plot of each edge's probability under the two posteriors",
           ""};
  f.caption_html =
      "<b>What to look for:</b> dots on the dashed diagonal agree; the named dots "
      "differ most. Each dot is one edge: x is its probability under <i>" +
      plot::markup_escape(cmp.label_a) + "</i>, y under <i>" + plot::markup_escape(cmp.label_b) +
      "</i>" + (any_error ? ", with bars of \u00b12 standard errors." : ".");
  if (largest)
    f.caption_html += " Largest difference: <b>" +
                      plot::markup_escape(feature_label(
                          FeatureId{FeatureKind::kEdge, largest->from, largest->to}, d.variables)) +
                      "</b> (" + fixed(largest->a, 3) + " against " + fixed(largest->b, 3) + ").";
  if (any_error)
    f.caption_html += " " + std::to_string(differ) + " of " + std::to_string(cmp.pairs.size()) +
                      " edges differ by more than 2 combined standard errors.";
  return f;
}

// --- page --------------------------------------------------------------------------------------

constexpr const char* kStyle = R"CSS(
:root { --ink:#1f2328; --muted:#59616e; --line:#e2e5ea; --bg:#f5f6f8; --card:#ffffff;
  --blue:#0072b2; --vermillion:#d55e00; --green:#009e73; --orange:#e69f00; }
* { box-sizing: border-box; }
html { -webkit-text-size-adjust: 100%; }
body { margin: 0; background: var(--bg); color: var(--ink);
  font: 16px/1.55 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial,
    "Noto Sans", "DejaVu Sans", sans-serif; }
main { max-width: 980px; margin: 0 auto; padding: 36px 24px 64px; }
header h1 { font-size: 30px; line-height: 1.2; margin: 0 0 6px; letter-spacing: -0.01em; }
header .source { color: var(--muted); margin: 0; font-size: 15px; }
header .source code { font-size: 14px; }
nav { margin: 18px 0 4px; display: flex; flex-wrap: wrap; gap: 6px 8px; }
nav a { font-size: 14px; color: var(--ink); text-decoration: none; background: var(--card);
  border: 1px solid var(--line); border-radius: 999px; padding: 3px 12px; }
nav a:hover { border-color: var(--blue); color: var(--blue); }
.card { background: var(--card); border: 1px solid var(--line); border-radius: 14px;
  padding: 22px 26px; margin: 20px 0; box-shadow: 0 1px 3px rgba(20, 30, 50, 0.05); }
h2 { font-size: 21px; margin: 0 0 14px; letter-spacing: -0.005em; }
.verdict { display: flex; gap: 22px; align-items: center; border-left: 8px solid var(--muted); }
.verdict.ok { border-left-color: var(--green); }
.verdict.bad { border-left-color: var(--vermillion); }
.verdict .badge { flex: none; font-size: 22px; font-weight: 700; color: #fff;
  background: var(--muted); border-radius: 12px; padding: 12px 18px; line-height: 1.2; }
.verdict.ok .badge { background: var(--green); }
.verdict.bad .badge { background: var(--vermillion); }
.verdict .summary { margin: 0 0 8px; font-size: 17px; }
.verdict .numbers { display: flex; flex-wrap: wrap; gap: 6px 22px; margin: 0; padding: 0;
  list-style: none; color: var(--muted); font-size: 15px; }
.verdict .numbers b { color: var(--ink); font-variant-numeric: tabular-nums; }
.verdict .rule { margin: 8px 0 0; color: var(--muted); font-size: 14.5px; }
.verdict .measures { margin: 0 0 8px; font-size: 15px; font-variant-numeric: tabular-nums; }
.caution { background: #fff7e6; border: 1px solid #f1c677; border-left: 8px solid var(--orange);
  border-radius: 14px; padding: 18px 24px; margin: 20px 0; }
.caution h2 { font-size: 18px; margin: 0 0 6px; }
.caution p { margin: 0; font-size: 16px; }
.caution ul { margin: 10px 0 0; padding-left: 20px; }
.facts { display: grid; grid-template-columns: repeat(auto-fill, minmax(190px, 1fr));
  gap: 14px 24px; margin: 0 0 8px; }
.facts div { min-width: 0; }
.facts dt { color: var(--muted); font-size: 12.5px; text-transform: uppercase;
  letter-spacing: 0.05em; }
.facts dd { margin: 2px 0 0; font-size: 20px; font-weight: 600; overflow-wrap: anywhere;
  font-variant-numeric: tabular-nums; }
.facts dd.text { font-size: 15px; font-weight: 500; }
table { border-collapse: collapse; width: 100%; font-variant-numeric: tabular-nums;
  font-size: 15px; }
th, td { padding: 7px 10px; border-bottom: 1px solid var(--line); text-align: right;
  white-space: nowrap; }
th { font-size: 12.5px; text-transform: uppercase; letter-spacing: 0.04em; color: var(--muted);
  font-weight: 600; border-bottom: 2px solid var(--line); }
th:first-child, td:first-child { text-align: left; white-space: normal; }
tbody tr:hover { background: #f8f9fb; }
td.fail { color: var(--vermillion); font-weight: 700; }
.undef { color: var(--muted); cursor: help; }
.kind { color: var(--muted); font-size: 13px; }
.bar { display: inline-block; width: 90px; height: 8px; background: #e9edf2; border-radius: 4px;
  vertical-align: middle; margin-left: 10px; overflow: hidden; }
.bar span { display: block; height: 100%; background: var(--blue); }
.note { color: var(--muted); font-size: 14.5px; margin: 10px 0 0; }
figure { margin: 0; }
figure img { display: block; max-width: 100%; height: auto; margin: 0 auto; border-radius: 6px; }
.fit { overflow: hidden; }
figcaption { color: var(--muted); font-size: 15px; margin-top: 12px; }
figcaption b { color: var(--ink); }
figcaption .files { display: block; margin-top: 6px; font-size: 13.5px; }
b.warn { color: var(--vermillion); }
a { color: var(--blue); }
.missing { color: var(--vermillion); font-weight: 600; }
footer { color: var(--muted); font-size: 13.5px; margin-top: 28px; text-align: center; }
@media (max-width: 640px) { .verdict { flex-direction: column; align-items: flex-start; } }
@media print { body { background: #fff; } .card, .caution { box-shadow: none; break-inside: avoid; }
  nav { display: none; } }
)CSS";

// Marks images that failed to load (a report folder taken apart) and records on <body> how many
// loaded, so a person sees the problem and a test can count.
constexpr const char* kImageCheck = R"JS(
window.addEventListener('load', function () {
  var images = document.images, loaded = 0;
  for (var i = 0; i < images.length; i++) {
    var img = images[i];
    if (img.complete && img.naturalWidth > 0) { loaded++; continue; }
    var note = document.createElement('p');
    note.className = 'missing';
    note.textContent = 'Image not found: ' + img.getAttribute('src') +
      ' (keep the files of the report folder together).';
    img.parentNode.insertBefore(note, img);
    img.style.display = 'none';
  }
  document.body.setAttribute('data-images-loaded', String(loaded));
  document.body.setAttribute('data-images-total', String(images.length));
  // Figures sticking out of their card's content box, and a page wider than the window: both mean something
  // is cut off or needs sideways scrolling.
  var clipped = 0;
  for (var j = 0; j < images.length; j++) {
    var card = images[j].closest('section'), box = images[j].getBoundingClientRect();
    if (!card || box.width === 0) continue;
    var frame = card.getBoundingClientRect(), style = getComputedStyle(card);
    var left = frame.left + parseFloat(style.borderLeftWidth) + parseFloat(style.paddingLeft);
    var right = frame.right - parseFloat(style.borderRightWidth) - parseFloat(style.paddingRight);
    if (box.left < left - 0.5 || box.right > right + 0.5) clipped++;
  }
  document.body.setAttribute('data-figures-clipped', String(clipped));
  document.body.setAttribute('data-page-overflow', String(
    Math.max(0, document.documentElement.scrollWidth - document.documentElement.clientWidth)));
});
)JS";

std::string verdict_html(const ReportData& d, const ConvergenceVerdict& v) {
  using State = ConvergenceVerdict::State;
  std::string cls, badge;
  switch (v.state) {
    case State::kConverged:
      cls = "ok";
      badge = "\u2713 Converged";
      break;
    case State::kNotConverged:
      cls = "bad";
      badge = "\u2715 Not converged";
      break;
    case State::kUndetermined:
      cls = "unknown";
      badge = "? Not assessed";
      break;
  }
  // The sentence is the library's, as `check` and `chain` print it, with a capital letter.
  const VerdictText text = report_verdict_text(d);
  std::string summary = text.outcome;
  if (!summary.empty()) summary[0] = static_cast<char>(std::toupper(summary[0]));
  if (v.state == State::kNotConverged)
    summary += ". Run the chains longer, and see the worst features below";
  std::string out =
      "<section class=\"card verdict " + cls + "\" id=\"verdict\">\n<div class=\"badge\">" + badge +
      "</div>\n<div>\n<p class=\"summary\">" + plot::markup_escape(summary) + ".</p>\n";
  if (!text.measures.empty())
    out += "<p class=\"measures\">" + plot::markup_escape(text.measures) + "</p>\n";
  out += "<ul class=\"numbers\"><li>max R-hat <b>" + rhat_text(v.max_rhat) +
         "</b></li><li>min bulk ESS <b>" + ess_text(v.min_ess_bulk) +
         "</b></li><li>min tail ESS <b>" + ess_text(v.min_ess_tail) + "</b></li></ul>\n";
  for (const std::string& caveat : text.caveats)
    out += "<p class=\"rule caveat\">Caveat: " + plot::markup_escape(caveat) + ".</p>\n";
  if (!d.run.verdict.empty())
    out += "<p class=\"rule\">Stopping rule of the run: " + plot::markup_escape(d.run.verdict) +
           "</p>\n";
  return out + "</div>\n</section>\n";
}

std::string caution_html(const ReportData& d) {
  std::string out =
      "<aside class=\"caution\" id=\"caution\" role=\"note\">\n<h2>\u26a0 Read with "
      "care</h2>\n<p>" +
      plot::markup_escape(kCausalCaution) + "</p>\n";
  if (!d.cautions.empty()) {
    out += "<ul>\n";
    for (const auto& c : d.cautions) out += "<li>" + plot::markup_escape(c) + "</li>\n";
    out += "</ul>\n";
  }
  return out + "</aside>\n";
}

std::string fact(const std::string& label, const std::string& value, bool text = false) {
  return "<div><dt>" + plot::markup_escape(label) + "</dt><dd" + (text ? " class=\"text\"" : "") +
         ">" + plot::markup_escape(value) + "</dd></div>";
}

std::string run_html(const ReportData& d) {
  const RunFacts& r = d.run;
  std::string out = "<section class=\"card\" id=\"run\">\n<h2>The run</h2>\n<dl class=\"facts\">";
  out += fact("variables", grouped(static_cast<std::int64_t>(d.variables.size())));
  out += fact("chains", grouped(r.chains));
  out += fact("steps per chain", grouped(r.steps_per_chain));
  out += fact("draws per chain", grouped(r.draws_per_chain));
  out += fact("draws in all", grouped(r.draws_per_chain * r.chains));
  if (r.regenerations >= 0) out += fact("regenerations", grouped(r.regenerations));
  for (const auto& [label, value] : r.extra) out += fact(label, value, true);
  out += "</dl>\n";
  if (!r.acceptance.empty()) {
    out +=
        "<table aria-label=\"acceptance by move\">\n<thead><tr><th>Move</th><th>Proposed</th>"
        "<th>Accepted</th><th>Acceptance rate</th></tr></thead>\n<tbody>\n";
    for (const auto& m : r.acceptance) {
      const double rate =
          m.proposed > 0 ? static_cast<double>(m.accepted) / static_cast<double>(m.proposed) : 0;
      out += "<tr><td>" + plot::markup_escape(m.move) + "</td><td>" + grouped(m.proposed) +
             "</td><td>" + grouped(m.accepted) + "</td><td>" +
             (m.proposed > 0 ? percent(rate) : "\u2014") +
             "<span class=\"bar\"><span style=\"width:" + fixed(100 * rate, 1) +
             "%\"></span></span></td></tr>\n";
    }
    out += "</tbody>\n</table>\n";
  }
  return out + "</section>\n";
}

std::string worst_features_html(const ReportData& d, const ConvergenceVerdict& v) {
  // The order of `covey check` (worst_first): failing features first, then passing ones, each
  // by R-hat and then by the smaller ESS; undefined features are counted in the verdict instead.
  const std::vector<FeatureSummary> summaries = summaries_of(d);
  std::vector<const ReportFeature*> order;
  for (std::size_t i : worst_first(summaries, thresholds_of(d)))
    if (assess(summaries[i], thresholds_of(d)) != FeatureStatus::kUndefined)
      order.push_back(&d.features[i]);
  constexpr std::size_t kShown = 12;
  const std::size_t shown = std::min(order.size(), kShown);
  std::string out = "<section class=\"card\" id=\"worst\">\n<h2>";
  out += v.failing > 0 ? "Worst features" : "Features closest to the thresholds";
  out += "</h2>\n";
  if (shown == 0)
    return out + "<p class=\"note\">No feature has a defined diagnostic.</p>\n</section>\n";
  out +=
      "<table>\n<thead><tr><th>Feature</th><th>Posterior</th><th>MCSE</th><th>R-hat</th>"
      "<th>Bulk ESS</th><th>Tail ESS</th></tr></thead>\n<tbody>\n";
  auto cell = [](const std::string& text, bool fail, bool undefined) {
    if (undefined) return std::string("<td>") + kUndefinedCell + "</td>";
    return std::string(fail ? "<td class=\"fail\">" : "<td>") + text + "</td>";
  };
  for (std::size_t i = 0; i < shown; ++i) {
    const ReportFeature& f = *order[i];
    const bool score = f.kind == FeatureKind::kScore;
    out += "<tr><td>" + plot::markup_escape(feature_label(f, d.variables)) +
           " <span class=\"kind\">" + to_string(f.kind) + "</span></td>";
    out +=
        "<td>" +
        (std::isnan(f.probability) ? std::string("\u2014") : fixed(f.probability, score ? 1 : 3)) +
        "</td><td>" + mcse_text(f.mcse) + "</td>";
    out += cell(rhat_text(f.rhat), rhat_fails(f.rhat, d), std::isnan(f.rhat));
    out += cell(ess_text(f.ess_bulk), ess_fails(f.ess_bulk, d), std::isnan(f.ess_bulk));
    out += cell(ess_text(f.ess_tail), ess_fails(f.ess_tail, d), std::isnan(f.ess_tail));
    out += "</tr>\n";
  }
  out +=
      "</tbody>\n</table>\n<p class=\"note\">Failing first, then by R-hat and the smaller ESS, as "
      "<code>covey check</code> orders them (R-hat " +
      std::string("&lt; ") + fixed(d.rhat_threshold, 2) + ", ESS &gt; " +
      fixed(d.ess_threshold, 0) +
      "); failing values in vermillion. Posterior is the "
      "probability of the feature (for the log score, its posterior mean); MCSE is its Monte "
      "Carlo standard error.";
  if (order.size() > shown)
    out += " Showing the " + std::to_string(shown) + " worst of " +
           grouped(static_cast<std::int64_t>(order.size())) + ".";
  return out + "</p>\n</section>\n";
}

// The most probable features of one kind, with their MCSE: what the network is, as numbers.
std::string probable_rows(const ReportData& d, FeatureKind kind, std::size_t shown) {
  std::vector<const ReportFeature*> order;
  for (const auto& f : d.features)
    if (f.kind == kind && !std::isnan(f.probability)) order.push_back(&f);
  std::stable_sort(order.begin(), order.end(), [](const ReportFeature* a, const ReportFeature* b) {
    return a->probability > b->probability;
  });
  std::string out;
  for (std::size_t i = 0; i < std::min(shown, order.size()); ++i) {
    const ReportFeature& f = *order[i];
    out += "<tr><td>" + plot::markup_escape(feature_label(f, d.variables)) + "</td><td>" +
           fixed(f.probability, 3) +
           "<span class=\"bar\"><span style=\"width:" + fixed(100 * f.probability, 1) +
           "%\"></span></span></td><td>" + mcse_text(f.mcse) + "</td></tr>\n";
  }
  return out;
}

std::string network_html(const ReportData& d) {
  constexpr std::size_t kShown = 15;
  const std::string edges = probable_rows(d, FeatureKind::kEdge, kShown);
  const std::string adjacencies = probable_rows(d, FeatureKind::kAdjacency, kShown);
  if (edges.empty() && adjacencies.empty()) return "";
  std::string out = "<section class=\"card\" id=\"network\">\n<h2>The most probable links</h2>\n";
  const auto table = [&](const char* label, const std::string& rows) {
    if (rows.empty()) return;
    out += "<table aria-label=\"" + std::string(label) + "\">\n<thead><tr><th>" + label +
           "</th><th>Posterior probability</th><th>MCSE</th></tr></thead>\n<tbody>\n" + rows +
           "</tbody>\n</table>\n";
  };
  table("Directed edge", edges);
  table("Adjacency (either direction)", adjacencies);
  out +=
      "<p class=\"note\">The " + std::to_string(kShown) +
      " most probable of each kind. An adjacency far more probable than either of its edges is a "
      "link whose direction the data leave open. MCSE is the Monte Carlo standard error of the "
      "probability; one within 1/draws of 0 or 1 is unreliable.</p>\n";
  return out + "</section>\n";
}

std::string figure_html(const Figure& f) {
  std::string out = "<section class=\"card\" id=\"" + f.id + "\">\n<h2>" +
                    plot::markup_escape(f.heading) + "</h2>\n<figure>\n";
  // Every figure fits its card: a wider one (a large consensus graph) is scaled down to the
  // card's width, and its caption points to the full-size SVG.
  out += "<div class=\"fit\">";
  out += "<a href=\"" + f.links.front().second + "\"><img src=\"" + f.png + "\" width=\"" +
         std::to_string(f.width) + "\" height=\"" + std::to_string(f.height) + "\" alt=\"" +
         plot::markup_escape(f.alt) + "\"></a></div>\n";
  out += "<figcaption>" + f.caption_html + "<span class=\"files\">Files: ";
  for (std::size_t i = 0; i < f.links.size(); ++i)
    out += (i ? " · " : "") + std::string("<a href=\"") + f.links[i].second + "\">" +
           plot::markup_escape(f.links[i].first) + "</a>";
  out += " · <a href=\"" + f.png + "\">PNG</a>";
  if (f.width > kPageFigureWidth)
    out += " (scaled down to fit the page; the SVG zooms without loss)";
  out += "</span></figcaption>\n</figure>\n</section>\n";
  return out;
}

std::string page_html(const ReportData& d, const ConvergenceVerdict& v,
                      const std::vector<Figure>& figures) {
  std::string out = "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n";
  out += std::string(kGeneratorMeta) + " " + kVersion + "\">\n";
  out += "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n";
  out += "<title>" + plot::markup_escape(d.title) + " \u2014 covey report</title>\n";
  out += "<style>" + std::string(kStyle) + "</style>\n</head>\n<body>\n<main>\n";
  out += "<header>\n<h1>" + plot::markup_escape(d.title) + "</h1>\n<p class=\"source\">";
  if (!d.source.empty()) out += "From <code>" + plot::markup_escape(d.source) + "</code> · ";
  out += "covey " + std::string(kVersion) + "</p>\n<nav aria-label=\"sections\">";
  const std::string network = network_html(d);
  out += "<a href=\"#verdict\">Verdict</a>";
  if (!network.empty()) out += "<a href=\"#network\">Most probable links</a>";
  out += "<a href=\"#run\">Run</a>";
  for (const auto& f : figures) {
    if (f.id.rfind("feature-trace-", 0) == 0) {  // one link for the worst features' traces
      if (f.id == "feature-trace-1") out += "<a href=\"#" + f.id + "\">Worst features by chain</a>";
      continue;
    }
    out += "<a href=\"#" + f.id + "\">" + plot::markup_escape(f.heading) + "</a>";
    if (f.id == "ess") out += "<a href=\"#worst\">Worst features</a>";
  }
  out += "</nav>\n</header>\n";
  out += verdict_html(d, v);
  out += caution_html(d);
  out += network;
  out += run_html(d);
  bool worst_written = false;
  for (const auto& f : figures) {
    out += figure_html(f);
    if (f.id == "ess") {
      out += worst_features_html(d, v);
      worst_written = true;
    }
  }
  if (!worst_written) out += worst_features_html(d, v);
  out += "<footer>Made by covey " + std::string(kVersion) +
         ". Every figure is also saved as SVG beside this page; the consensus graph also as "
         "DOT.</footer>\n";
  out += "</main>\n<script>" + std::string(kImageCheck) + "</script>\n</body>\n</html>\n";
  return out;
}

}  // namespace

void require_report_folder(const std::string& dir, bool overwrite) {
  namespace fs = std::filesystem;
  if (!fs::exists(dir)) return;
  if (!fs::is_directory(dir)) throw InputError(dir + ": exists and is not a folder");
  if (fs::is_empty(dir)) return;
  std::ifstream in(fs::path(dir) / "index.html", std::ios::binary);
  std::string head(4096, '\0');
  in.read(head.data(), static_cast<std::streamsize>(head.size()));
  head.resize(static_cast<std::size_t>(in.gcount()));
  if (head.find(kGeneratorMeta) == std::string::npos)
    throw InputError(dir +
                     ": folder exists and is not a covey report; choose another folder or "
                     "remove it first");
  // An earlier report is the user's file too: the same rule as require_new_output.
  require_new_output(dir + "/index.html", overwrite);
}

void write_report(const ReportData& data, const std::string& dir, bool overwrite) {
  validate(data);
  require_report_folder(dir, overwrite);
  AtomicDirectory out(dir);
  const std::string& tmp = out.temp_path();
  const ConvergenceVerdict verdict = assess_convergence(data);
  std::vector<Figure> figures;
  if (!data.traces.empty()) figures.push_back(trace_figure(data, tmp));
  if (!data.features.empty()) {
    figures.push_back(rhat_figure(data, tmp, verdict));
    figures.push_back(ess_figure(data, tmp));
  }
  for (std::size_t k = 0; k < data.feature_traces.size(); ++k)
    figures.push_back(feature_trace_figure(data, tmp, k));
  if (!data.edge_probability.empty() && !data.variables.empty()) {
    figures.push_back(heat_map_figure(data, tmp));
    const ConsensusGraph graph =
        consensus_graph(data.variables, data.edge_probability, data.consensus_threshold);
    figures.push_back(consensus_figure(data, tmp, graph));
  }
  if (data.comparison) figures.push_back(comparison_figure(data, tmp));
  write_text_file_atomically(tmp + "/index.html", page_html(data, verdict, figures));
  out.commit();
}

}  // namespace covey
