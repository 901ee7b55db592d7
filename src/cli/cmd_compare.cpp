// `covey compare A B`: two posteriors over DAGs feature by feature (restricted against
// unrestricted, chain against exact, ...), the mass of D_k and log Z over all DAGs.
#include <algorithm>
#include <cmath>
#include <iomanip>
#include <iostream>

#include "command.hpp"
#include "common.hpp"
#include "covey/analysis/posterior_compare.hpp"
#include "covey/core/error.hpp"
#include "covey/report/report.hpp"

namespace covey::cli {
namespace {

struct CompareCliOptions {
  std::string a, b;
  std::string features = "edges,adjacencies,ancestors";
  int cover = -1;
  std::size_t top = 20;
  std::size_t cover_draws = 20000;
  std::uint64_t seed = 1;
  std::string memory_limit;
  bool json = false;
  int threads = 0;
};

nlohmann::json mass_json(const PosteriorComparison& c) {
  if (!c.mass_in_cover_class) return nullptr;
  const auto& m = *c.mass_in_cover_class;
  return {{"k", m.k},
          {"side", m.side},
          {"method", m.mass.method},
          {"estimate", json_number(m.mass.estimate)},
          {"se", json_number(m.mass.se)},
          {"ci95", {json_number(m.mass.lo), json_number(m.mass.hi)}}};
}

nlohmann::json total_weight_json(const PosteriorComparison& c) {
  if (!c.log_total_weight_all) return nullptr;
  const auto& w = *c.log_total_weight_all;
  nlohmann::json out = {{"estimate", json_number(w.estimate)},
                        {"ci95", {json_number(w.lo), json_number(w.hi)}}};
  if (w.exact) out["exact"] = *w.exact;
  return out;
}

nlohmann::json comparison_json(const PosteriorComparison& c) {
  nlohmann::json features = nlohmann::json::array();
  for (const FeatureDifference& d : c.features)
    features.push_back({{"kind", to_string(d.id.kind)},
                        {"from", c.variables[std::size_t(d.id.from)]},
                        {"to", c.variables[std::size_t(d.id.to)]},
                        {"a", json_number(d.a.value)},
                        {"b", json_number(d.b.value)},
                        {"diff", json_number(d.diff)},
                        {"se", json_number(d.se)}});
  return {{"a", c.label_a},
          {"b", c.label_b},
          {"features", features},
          {"mass_in_cover_class", mass_json(c)},
          {"log_total_weight_all", total_weight_json(c)}};
}

void print_comparison(const PosteriorComparison& c, std::size_t top) {
  std::cout << "a: " << c.label_a << "\nb: " << c.label_b << "\n";
  const std::size_t shown = top == 0 ? c.features.size() : std::min(top, c.features.size());
  std::cout << c.features.size() << " features compared, largest |b - a| first (" << shown
            << " shown):\n";
  std::size_t width = 8;
  std::vector<std::string> labels;
  for (std::size_t i = 0; i < shown; ++i) {
    const FeatureDifference& d = c.features[i];
    labels.push_back(feature_label(d.id, c.variables));
    width = std::max(width, display_width(labels.back()));
  }
  const auto pad = [width](const std::string& s) { return pad_right(s, width); };
  std::cout << pad("feature") << "         a         b      diff        se\n";
  for (std::size_t i = 0; i < shown; ++i) {
    const FeatureDifference& d = c.features[i];
    std::cout << pad(labels[i]) << ' ' << std::setw(9) << format_number("%.4f", d.a.value) << ' '
              << std::setw(9) << format_number("%.4f", d.b.value) << ' ' << std::setw(9)
              << format_number("%+.4f", d.diff) << ' ' << std::setw(9)
              << format_number("%.4f", d.se) << '\n';
  }
  if (c.mass_in_cover_class) {
    const auto& m = *c.mass_in_cover_class;
    std::cout << "posterior mass of D_" << m.k << " under " << m.side << " (" << m.mass.method
              << "): " << format_number("%.4g", m.mass.estimate) << ", se "
              << format_number("%.2g", m.mass.se) << ", 95% interval ["
              << format_number("%.4g", m.mass.lo) << ", " << format_number("%.4g", m.mass.hi)
              << "]\n";
  }
  if (c.log_total_weight_all) {
    const auto& w = *c.log_total_weight_all;
    std::cout << "log Z over all DAGs = log Z_k - log P(D_k | data): "
              << format_number("%.6f", w.estimate) << ", 95% interval ["
              << format_number("%.6f", w.lo) << ", " << format_number("%.6f", w.hi) << "]";
    if (w.exact) std::cout << "; exact " << format_number("%.6f", *w.exact);
    std::cout << "\n";
  } else if (c.mass_in_cover_class && c.mass_in_cover_class->mass.estimate == 0) {
    std::cout << "log Z over all DAGs: not estimated (no draw of the unrestricted side lies in "
                 "D_k)\n";
  }
}

void setup_compare(CLI::App& app) {
  auto* cmd = app.add_subcommand(
      "compare",
      "Two posteriors over DAGs feature by feature, with standard errors: exact cover-bounded "
      "draws (covey draw), exact all-DAG results (a score table, or covey exact draws) and chain "
      "runs (covey chain), in any pairing");
  auto o = std::make_shared<CompareCliOptions>();
  cmd->add_option("A", o->a, "first result: chain run, draws file, or score table (exact)")
      ->required();
  cmd->add_option("B", o->b, "second result, of the same score table")->required();
  cmd->add_option("--features", o->features,
                  "Feature kinds compared, comma-separated: edges, adjacencies, ancestors")
      ->capture_default_str();
  cmd->add_option("--cover", o->cover,
                  "k of the class D_k whose posterior mass is estimated (default: the cover "
                  "bound of a cover-bounded side, else the teleport cover of a chain run that "
                  "teleported, else none)")
      ->check(kNonNegative);
  add_top_option(*cmd, o->top);
  cmd->add_option("--cover-draws", o->cover_draws,
                  "Exact draws that estimate the mass of D_k from a score table of more than 6 "
                  "variables")
      ->transform(kCount)
      ->check(kPositive)
      ->capture_default_str();
  add_seed_option(*cmd, o->seed, "those draws");
  add_memory_limit_option(*cmd, o->memory_limit);
  cmd->add_flag("--json", o->json,
                "Print JSON: a, b, features, mass_in_cover_class, log_total_weight_all");
  add_threads_option(*cmd, o->threads);
  cmd->callback([o] {
    const auto threads = apply_threads(o->threads);
    CompareOptions options;
    options.kinds = parse_feature_kinds(o->features, "--features");
    if (options.kinds.score)
      throw InputError("--features: the log score is not compared (its scale differs by class)");
    options.cover = o->cover;
    options.exact_draws = o->cover_draws;
    options.seed = o->seed;
    options.memory_limit = memory_limit(o->memory_limit);
    const PosteriorEstimate a = PosteriorEstimate::load({o->a}, options);
    const PosteriorEstimate b = PosteriorEstimate::load({o->b}, options);
    const PosteriorComparison c = compare_posteriors(a, b, options);
    if (o->json)
      print_json(comparison_json(c));
    else
      print_comparison(c, o->top);
  });
}

const Registration compare_registration(70, setup_compare);

}  // namespace
}  // namespace covey::cli
