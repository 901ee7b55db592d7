#include "covey/graph/features.hpp"

#include <sstream>

#include "covey/core/enum_names.hpp"
#include "covey/core/error.hpp"

namespace covey {

namespace {
constexpr EnumName<FeatureKind> kFeatureKindNames[] = {{FeatureKind::kEdge, "edge"},
                                                       {FeatureKind::kAdjacency, "adjacency"},
                                                       {FeatureKind::kAncestor, "ancestor"},
                                                       {FeatureKind::kScore, "score"}};
}  // namespace

const char* to_string(FeatureKind kind) {
  return enum_name(kFeatureKindNames, kind);
}

std::string feature_label(const FeatureId& f, const std::vector<std::string>& names) {
  if (f.kind == FeatureKind::kScore) return "log score";
  auto name = [&](int i) {
    return i >= 0 && i < static_cast<int>(names.size()) ? names[i] : "#" + std::to_string(i);
  };
  const char* link = f.kind == FeatureKind::kEdge        ? " \u2192 "
                     : f.kind == FeatureKind::kAdjacency ? " \u2014 "
                                                         : " \u21dd ";
  return name(f.from) + link + name(f.to);
}

FeatureKinds parse_feature_kinds(const std::string& text, const std::string& option) {
  FeatureKinds kinds{false, false, false, false};
  std::stringstream in(text);
  std::string item;
  bool any = false;
  while (std::getline(in, item, ',')) {
    if (item == "edges" || item == "edge") {
      kinds.edges = true;
    } else if (item == "adjacencies" || item == "adjacency") {
      kinds.adjacencies = true;
    } else if (item == "ancestors" || item == "ancestor") {
      kinds.ancestors = true;
    } else if (item == "score") {
      kinds.score = true;
    } else if (item == "all") {
      kinds = FeatureKinds{};
    } else {
      throw InputError(option + ": unknown feature kind '" + item +
                       "' (expected a comma-separated list of edges, adjacencies, ancestors, "
                       "score)");
    }
    any = true;
  }
  if (!any) throw InputError(option + ": no feature kind given");
  return kinds;
}

std::vector<FeatureId> list_features(int n, const FeatureKinds& kinds) {
  std::vector<FeatureId> out;
  if (kinds.edges)
    for (int u = 0; u < n; ++u)
      for (int v = 0; v < n; ++v)
        if (u != v) out.push_back({FeatureKind::kEdge, u, v});
  if (kinds.adjacencies)
    for (int u = 0; u < n; ++u)
      for (int v = u + 1; v < n; ++v) out.push_back({FeatureKind::kAdjacency, u, v});
  if (kinds.ancestors)
    for (int u = 0; u < n; ++u)
      for (int v = 0; v < n; ++v)
        if (u != v) out.push_back({FeatureKind::kAncestor, u, v});
  if (kinds.score) out.push_back({FeatureKind::kScore, -1, -1});
  return out;
}

}  // namespace covey
