#include "covey/report/consensus_graph.hpp"

#include <graphviz/cgraph.h>
#include <graphviz/gvc.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <memory>
#include <mutex>

#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/report/plot.hpp"

#if defined(__has_feature)
#if __has_feature(address_sanitizer)
#define COVEY_UNDER_ASAN 1
#endif
#endif
#if defined(__SANITIZE_ADDRESS__) || defined(COVEY_UNDER_ASAN)
// Under AddressSanitizer: graphviz's text-layout plugin and the font libraries below it (pango,
// fontconfig) keep allocations that they never free, and the "dot" layout loses the virtual
// edges it makes to break a cycle; LeakSanitizer would report them at exit of every program
// that lays out a graph or draws text. They are not covey's, so they are suppressed by the
// library that allocated them. (Graphviz has no frame pointers, so the default fast unwinder
// often stops at libgvc's allocator: hence libgvc too. A graph covey forgot to close would
// still be reported, from libcgraph.)
extern "C" const char* __lsan_default_suppressions() {
  return "leak:libgvplugin_pango.so\n"
         "leak:libgvplugin_dot_layout.so\n"
         "leak:libgvc.so\n"
         "leak:libpangoft2-1.0.so\n"
         "leak:libfontconfig.so\n";
}
#endif

namespace covey {

ConsensusGraph consensus_graph(const std::vector<std::string>& names,
                               const std::vector<std::vector<double>>& edge_probability,
                               double threshold) {
  if (!(threshold >= 0 && threshold < 1))
    throw InputError("consensus threshold " + std::to_string(threshold) + " is outside [0, 1)");
  const std::size_t n = names.size();
  if (edge_probability.size() != n)
    throw InputError("edge-probability matrix has " + std::to_string(edge_probability.size()) +
                     " rows for " + std::to_string(n) + " variables");
  ConsensusGraph graph;
  graph.names = names;
  graph.threshold = threshold;
  for (std::size_t u = 0; u < n; ++u) {
    if (edge_probability[u].size() != n)
      throw InputError("edge-probability matrix row " + names[u] + " has " +
                       std::to_string(edge_probability[u].size()) + " entries for " +
                       std::to_string(n) + " variables");
    for (std::size_t v = 0; v < n; ++v) {
      const double p = edge_probability[u][v];
      if (std::isnan(p)) continue;
      if (p < 0 || p > 1)
        throw InputError("edge probability " + names[u] + " -> " + names[v] + " = " +
                         std::to_string(p) + " is outside [0, 1]");
      if (u != v && p > threshold)
        graph.edges.push_back({static_cast<int>(u), static_cast<int>(v), p, false});
    }
  }
  // The edge probabilities of a pair are exclusive events (a DAG holds at most one direction),
  // so their sum is the probability that the pair is adjacent.
  for (std::size_t u = 0; u < n; ++u)
    for (std::size_t v = u + 1; v < n; ++v) {
      const double forward = edge_probability[u][v], backward = edge_probability[v][u];
      if (std::isnan(forward) || std::isnan(backward)) continue;
      if (forward > threshold || backward > threshold) continue;
      const double adjacent = std::min(1.0, forward + backward);
      if (adjacent > threshold)
        graph.undirected.push_back({static_cast<int>(u), static_cast<int>(v), adjacent, false});
    }
  const auto by_probability = [](const ConsensusEdge& a, const ConsensusEdge& b) {
    return a.probability > b.probability;
  };
  std::stable_sort(graph.edges.begin(), graph.edges.end(), by_probability);
  std::stable_sort(graph.undirected.begin(), graph.undirected.end(), by_probability);

  // An edge u -> v closes a cycle exactly when v reaches u: one search per node (n is small).
  std::vector<std::vector<int>> children(n);
  for (const auto& e : graph.edges) children[e.from].push_back(e.to);
  std::vector<std::vector<char>> reaches(n, std::vector<char>(n, 0));
  for (std::size_t s = 0; s < n; ++s) {
    std::vector<int> stack{static_cast<int>(s)};
    while (!stack.empty()) {
      const int u = stack.back();
      stack.pop_back();
      for (int v : children[u])
        if (!reaches[s][v]) {
          reaches[s][v] = 1;
          stack.push_back(v);
        }
    }
  }
  for (auto& e : graph.edges) {
    e.on_cycle = reaches[e.to][e.from] != 0;
    graph.has_cycle = graph.has_cycle || e.on_cycle;
  }
  return graph;
}

namespace {

std::string quote(const std::string& s) {
  std::string q = "\"";
  for (char c : s) {
    if (c == '"' || c == '\\') q += '\\';
    if (c == '\n') {
      q += "\\n";
      continue;
    }
    q += c;
  }
  return q + "\"";
}

std::string fixed(double v, int decimals) {
  char text[32];
  std::snprintf(text, sizeof text, "%.*f", decimals, v);
  return text;
}

}  // namespace

std::vector<int> isolated_variables(const ConsensusGraph& graph) {
  std::vector<char> connected(graph.names.size(), 0);
  for (const auto& e : graph.edges) connected[e.from] = connected[e.to] = 1;
  for (const auto& e : graph.undirected) connected[e.from] = connected[e.to] = 1;
  std::vector<int> isolated;
  for (std::size_t v = 0; v < graph.names.size(); ++v)
    if (!connected[v]) isolated.push_back(static_cast<int>(v));
  return isolated;
}

std::string consensus_dot(const ConsensusGraph& graph, const ConsensusDotOptions& options) {
  const std::string font = "\"DejaVu Sans\"";
  const std::string edge_colour = plot::to_hex(plot::okabe_ito::kBlue);
  const std::string cycle_colour = plot::to_hex(plot::okabe_ito::kVermillion);
  std::string out = "digraph \"consensus\" {\n";
  out += "  graph [rankdir=" + std::string(options.left_to_right ? "LR" : "TB") +
         ", bgcolor=\"white\", pad=0.25, nodesep=0.45, ranksep=0.55, fontname=" + font +
         ", fontsize=11, fontcolor=\"#555555\"";
  if (graph.has_cycle)
    out += ", labelloc=b, label=" +
           quote("Edges in vermillion form a directed cycle: the edge marginals above " +
                 fixed(graph.threshold, 2) + " do not fit one DAG.");
  out += "];\n";
  out +=
      "  node [shape=box, style=\"rounded,filled\", fillcolor=\"#eef3f9\", color=\"#44546a\", "
      "fontname=" +
      font + ", fontsize=13, fontcolor=\"#1f2328\", margin=\"0.14,0.07\", height=0.36];\n";
  out += "  edge [color=" + quote(edge_colour) + ", fontname=" + font +
         ", fontsize=10.5, fontcolor=\"#333333\", arrowsize=0.75];\n";
  const std::vector<int> isolated = isolated_variables(graph);
  const bool draw_isolated = static_cast<int>(isolated.size()) <= options.max_isolated_drawn;
  for (std::size_t v = 0; v < graph.names.size(); ++v) {
    const bool lone = std::binary_search(isolated.begin(), isolated.end(), static_cast<int>(v));
    if (lone && !draw_isolated) continue;
    out += "  " + quote(graph.names[v]);
    if (lone) out += " [style=\"rounded,dashed\", color=\"#9aa4b2\", fontcolor=\"#6b7280\"]";
    out += ";\n";
  }
  const double span = 1 - graph.threshold;
  for (const auto& e : graph.edges) {
    // Width from 1 (at the threshold) to 5 (certain), so strong edges read at a glance.
    const double width = 1 + 4 * std::clamp((e.probability - graph.threshold) / span, 0.0, 1.0);
    const std::string p = fixed(e.probability, 2);
    out += "  " + quote(graph.names[e.from]) + " -> " + quote(graph.names[e.to]) +
           " [penwidth=" + fixed(width, 2) + ", label=" + quote(" " + p) + ", tooltip=" +
           quote("P(" + graph.names[e.from] + " -> " + graph.names[e.to] + ") = " + p);
    if (e.on_cycle) out += ", color=" + quote(cycle_colour) + ", fontcolor=" + quote(cycle_colour);
    out += "];\n";
  }
  const std::string undirected_colour = plot::to_hex(plot::okabe_ito::kOrange);
  for (const auto& e : graph.undirected) {
    const std::string p = fixed(e.probability, 2);
    out += "  " + quote(graph.names[e.from]) + " -> " + quote(graph.names[e.to]) +
           " [dir=none, style=dashed, penwidth=1.5, color=" + quote(undirected_colour) +
           ", label=" + quote(" " + p) + ", tooltip=" +
           quote("P(" + graph.names[e.from] + " adjacent to " + graph.names[e.to] + ") = " + p +
                 "; neither direction is above " + fixed(graph.threshold, 2)) +
           "];\n";
  }
  return out + "}\n";
}

namespace {

// Graphviz keeps global state (its error hook, plugin tables): one rendering at a time.
std::mutex& graphviz_mutex() {
  static std::mutex m;
  return m;
}

std::string& graphviz_errors() {
  static std::string text;
  return text;
}

int collect_error(char* message) {
  graphviz_errors() += message;
  return 0;
}

// One graphviz context for the whole process, never freed: graphviz 2.43's text-layout plugin
// keeps a pointer to the last font name, which a freed context would leave dangling (a
// use-after-free that AddressSanitizer reports when a second context lays out text).
GVC_t* graphviz_context() {
  static GVC_t* const context = gvContext();
  return context;
}

struct GraphDeleter {
  void operator()(Agraph_t* g) const { agclose(g); }
};

std::string last_line(std::string text) {
  while (!text.empty() && (text.back() == '\n' || text.back() == ' ')) text.pop_back();
  const auto nl = text.find_last_of('\n');
  return nl == std::string::npos ? text : text.substr(nl + 1);
}

}  // namespace

void render_dot(const std::string& dot, const std::string& path, double png_dpi) {
  const auto dot_pos = path.find_last_of('.');
  std::string format = dot_pos == std::string::npos ? "" : path.substr(dot_pos + 1);
  std::transform(format.begin(), format.end(), format.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  if (format != "svg" && format != "png")
    throw InputError(path + ": unknown image type (use .png or .svg)");
  if (!(png_dpi >= 36 && png_dpi <= 1200))
    throw InputError("graph resolution " + std::to_string(png_dpi) + " dpi is out of range");

  std::string bytes;
  {
    std::lock_guard<std::mutex> lock(graphviz_mutex());
    graphviz_errors().clear();
    const agusererrf previous = agseterrf(collect_error);
    GVC_t* const gvc = graphviz_context();
    std::unique_ptr<Agraph_t, GraphDeleter> graph(agmemread(dot.c_str()));
    auto fail = [&](const std::string& what) {
      agseterrf(previous);
      const std::string detail = last_line(graphviz_errors());
      throw Error(path + ": " + what + (detail.empty() ? "" : ": " + detail));
    };
    if (!gvc) fail("cannot start graphviz");
    if (!graph) fail("graphviz cannot read the DOT text");
    if (format == "png") {
      std::string dpi = fixed(png_dpi, 0);
      agattr(graph.get(), AGRAPH, const_cast<char*>("dpi"), dpi.data());
    }
    if (gvLayout(gvc, graph.get(), "dot") != 0) fail("graphviz cannot lay out the graph");
    char* data = nullptr;
    unsigned int length = 0;
    const int status = gvRenderData(gvc, graph.get(), format.c_str(), &data, &length);
    if (status == 0 && data) bytes.assign(data, length);
    if (data) gvFreeRenderData(data);
    gvFreeLayout(gvc, graph.get());
    if (status != 0 || bytes.empty()) fail("graphviz cannot render " + format);
    agseterrf(previous);
  }
  write_text_file_atomically(path, bytes);
}

}  // namespace covey
