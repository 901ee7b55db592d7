#pragma once
// The consensus graph of a posterior: the directed edges whose posterior probability is above a
// threshold (0.5 by default: the edges more likely present than absent). Edge marginals need
// not agree with any single DAG, so the consensus can hold a directed cycle; it is still drawn
// (graphviz lays out cycles) and its cycle edges are marked. Rendering goes through graphviz's
// library (the "dot" layout), from DOT text that covey builds.
#include <string>
#include <vector>

namespace covey {

struct ConsensusEdge {
  int from = 0, to = 0;
  double probability = 0;
  bool on_cycle = false;  // `to` reaches `from` within the consensus graph
};

struct ConsensusGraph {
  std::vector<std::string> names;  // one per variable
  double threshold = 0.5;
  std::vector<ConsensusEdge> edges;  // probability > threshold; by decreasing probability
  // Links whose direction is uncertain: pairs u < v where neither u -> v nor v -> u passes the
  // threshold but P(u -> v) + P(v -> u), the probability of the adjacency, does (probability
  // holds that sum; on_cycle is false). By decreasing probability.
  std::vector<ConsensusEdge> undirected;
  bool has_cycle = false;
};

// Edges u -> v with edge_probability[u][v] > threshold. NaN entries (the diagonal) never enter.
// Throws InputError when the matrix is not square over `names`, holds a value outside [0, 1],
// or the threshold is outside [0, 1).
ConsensusGraph consensus_graph(const std::vector<std::string>& names,
                               const std::vector<std::vector<double>>& edge_probability,
                               double threshold = 0.5);

// Variables without any consensus edge or undirected link, in index order.
std::vector<int> isolated_variables(const ConsensusGraph& graph);

struct ConsensusDotOptions {
  // Variables without an edge are drawn muted (dashed) while there are at most this many;
  // more would only widen the layout, so they are then left out (list them elsewhere).
  int max_isolated_drawn = 12;
  bool left_to_right = false;  // ranks as columns instead of rows (for wide, shallow graphs)
};

// DOT text: a node per variable, edge width growing with probability, each edge labelled with
// it, cycle edges in vermillion with a note under the graph; undirected links as dashed lines
// without arrowheads, labelled with the adjacency probability.
std::string consensus_dot(const ConsensusGraph& graph, const ConsensusDotOptions& options = {});

// Lays out DOT text with graphviz ("dot" layout) and writes it as .svg or .png (by extension)
// atomically. PNGs are drawn at `png_dpi` (192 = twice the usual screen density, for sharp
// text). Throws InputError for an unknown extension, Error when graphviz rejects the text.
void render_dot(const std::string& dot, const std::string& path, double png_dpi = 192);

}  // namespace covey
