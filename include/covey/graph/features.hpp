#pragma once
// The features of a posterior over DAGs that covey summarizes (docs/mathematics.md section 8):
// directed edges u -> v, adjacencies u - v, ancestor relations u ~> v (a directed path of length >=
// 1), and the log score; and the selection of kinds a user asks for (`--features`).
#include <string>
#include <vector>

namespace covey {

enum class FeatureKind { kEdge, kAdjacency, kAncestor, kScore };
const char* to_string(FeatureKind kind);  // "edge", "adjacency", "ancestor", "score"

// One feature: an ordered pair for edges and ancestors, a pair from < to for adjacencies, and
// from = to = -1 for the log score.
struct FeatureId {
  FeatureKind kind = FeatureKind::kEdge;
  int from = -1, to = -1;
};

struct FeatureKinds {
  bool edges = true, adjacencies = true, ancestors = true, score = true;
};

// A feature as people read it: "A \u2192 B" (edge), "A \u2014 B" (adjacency), "A \u21dd B"
// (ancestor), "log score"; an index outside `names` shows as "#i".
std::string feature_label(const FeatureId& feature, const std::vector<std::string>& names);

// Parses a comma-separated list of edges, adjacencies, ancestors, score (singular forms and
// "all" accepted). Throws InputError naming `option` for an unknown or empty list.
FeatureKinds parse_feature_kinds(const std::string& text, const std::string& option);

// Every feature of the selected kinds over n variables, in the order edges (from-major),
// adjacencies, ancestors, score.
std::vector<FeatureId> list_features(int n, const FeatureKinds& kinds);

}  // namespace covey
