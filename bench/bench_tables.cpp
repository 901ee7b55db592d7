#include "bench_tables.hpp"

#include <bit>
#include <boost/random/normal_distribution.hpp>
#include <functional>
#include <string>
#include <utility>
#include <vector>

namespace covey::bench {

ScoreTable random_bench_table(const BenchTableShape& shape, Rng& rng) {
  const int n = shape.n;
  const int c = shape.candidates < 0 ? n - 1 : shape.candidates;
  boost::random::normal_distribution<double> normal(0.0, shape.sd);
  std::vector<Variable> vars;
  for (int v = 0; v < n; ++v)
    vars.push_back({"X" + std::to_string(v), VariableKind::kDiscrete, {}});
  std::vector<NodeScores> nodes(static_cast<std::size_t>(n));
  for (int v = 0; v < n; ++v) {
    NodeScores& node = nodes[static_cast<std::size_t>(v)];
    std::vector<int> others;
    for (int u = 0; u < n; ++u)
      if (u != v) others.push_back(u);
    if (c < n - 1) {
      // A uniform random subset of c candidates (partial Fisher-Yates shuffle).
      for (int i = 0; i < c; ++i) {
        const auto j = static_cast<std::size_t>(i) + uniform_below(rng, others.size() - i);
        std::swap(others[static_cast<std::size_t>(i)], others[j]);
      }
      others.resize(static_cast<std::size_t>(c));
    }
    node.candidates = others;
    std::function<void(int, ParentMask)> subsets = [&](int start, ParentMask m) {
      node.masks.push_back(m);
      node.log_scores.push_back(normal(rng) - shape.penalty * std::popcount(m));
      if (std::popcount(m) == shape.max_indegree) return;
      for (int b = start; b < c; ++b) subsets(b + 1, m | (ParentMask{1} << b));
    };
    subsets(0, 0);
  }
  return ScoreTable(std::move(vars), std::move(nodes));
}

}  // namespace covey::bench
