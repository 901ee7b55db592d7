// The consensus graph: thresholding, cycle marking (checked against covey's DAG module on
// random matrices), DOT text (parsed by graphviz's own `dot` program), rendering to SVG (parsed
// by Python's xml.etree) and PNG (read back with cairo).
#include "covey/report/consensus_graph.hpp"

#include <gtest/gtest.h>

#include <filesystem>

#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/core/random.hpp"
#include "covey/graph/dag.hpp"
#include "image_check.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::TempDir;
const double kNaN = std::numeric_limits<double>::quiet_NaN();

std::vector<std::vector<double>> chain_matrix() {
  // a -> b at 0.9, b -> c at 0.51, a -> c at exactly 0.5 (not above), c -> a at 0.49.
  return {{kNaN, 0.9, 0.5}, {0.05, kNaN, 0.51}, {0.49, 0.1, kNaN}};
}

TEST(ConsensusGraph, UndirectedLinkWhenOnlyTheAdjacencyPassesTheThreshold) {
  // a - c: 0.5 + 0.49 = 0.99 adjacent, neither direction above 0.5; a -> b passes on its own.
  const auto g = consensus_graph({"a", "b", "c"}, chain_matrix());
  ASSERT_EQ(g.undirected.size(), 1u);
  EXPECT_EQ(g.undirected[0].from, 0);
  EXPECT_EQ(g.undirected[0].to, 2);
  EXPECT_DOUBLE_EQ(g.undirected[0].probability, 0.99);
  // A pair with a passing direction is drawn as that edge only; a weak pair not at all.
  EXPECT_TRUE(consensus_graph({"a", "b", "c"}, chain_matrix(), 0.995).undirected.empty());
  const std::string dot = consensus_dot(g);
  EXPECT_NE(dot.find("\"a\" -> \"c\" [dir=none, style=dashed"), std::string::npos) << dot;
  EXPECT_EQ(dot.find("\"a\" -> \"b\" [dir=none"), std::string::npos) << dot;
  // An undirected link connects: neither end is isolated.
  const auto only_link =
      consensus_graph({"a", "b", "c"}, {{kNaN, 0.3, 0.0}, {0.3, kNaN, 0.0}, {0.0, 0.0, kNaN}});
  ASSERT_EQ(only_link.undirected.size(), 1u);
  EXPECT_EQ(isolated_variables(only_link), std::vector<int>{2});
}

TEST(ConsensusGraph, KeepsEdgesStrictlyAboveTheThresholdMostProbableFirst) {
  const auto g = consensus_graph({"a", "b", "c"}, chain_matrix());
  ASSERT_EQ(g.edges.size(), 2u);
  EXPECT_EQ(g.edges[0].from, 0);
  EXPECT_EQ(g.edges[0].to, 1);
  EXPECT_DOUBLE_EQ(g.edges[0].probability, 0.9);
  EXPECT_EQ(g.edges[1].from, 1);
  EXPECT_EQ(g.edges[1].to, 2);
  EXPECT_FALSE(g.has_cycle);
  EXPECT_EQ(consensus_graph({"a", "b", "c"}, chain_matrix(), 0.95).edges.size(), 0u);
  EXPECT_EQ(consensus_graph({"a", "b", "c"}, chain_matrix(), 0.0).edges.size(), 6u);
}

TEST(ConsensusGraph, MarksTheEdgesOfADirectedCycle) {
  // a -> b -> c -> a at 0.6 each (possible for marginals), plus c -> d off the cycle.
  std::vector<std::vector<double>> p(4, std::vector<double>(4, 0.0));
  p[0][1] = p[1][2] = p[2][0] = 0.6;
  p[2][3] = 0.8;
  const auto g = consensus_graph({"a", "b", "c", "d"}, p);
  EXPECT_TRUE(g.has_cycle);
  ASSERT_EQ(g.edges.size(), 4u);
  for (const auto& e : g.edges) EXPECT_EQ(e.on_cycle, e.to != 3) << e.from << "->" << e.to;
  const std::string dot = consensus_dot(g);
  EXPECT_NE(dot.find("directed cycle"), std::string::npos);
  EXPECT_NE(dot.find("#d55e00"), std::string::npos);  // Okabe-Ito vermillion for cycle edges
}

TEST(ConsensusGraph, CycleFlagAgreesWithTheDagModuleOnRandomMatrices) {
  // An independent acyclicity check (covey::is_acyclic on parent bitmasks) on 300 random
  // matrices over 6 variables, thresholded at 0.5.
  Rng rng = make_stream(2024, 0);
  int cyclic = 0;
  for (int trial = 0; trial < 300; ++trial) {
    const int n = 6;
    std::vector<std::vector<double>> p(n, std::vector<double>(n, kNaN));
    Dag dag(n);
    for (int u = 0; u < n; ++u)
      for (int v = 0; v < n; ++v)
        if (u != v) {
          p[u][v] = uniform01(rng) * 0.75;
          if (p[u][v] > 0.5) dag.add_edge(u, v);
        }
    const auto g = consensus_graph({"a", "b", "c", "d", "e", "f"}, p);
    EXPECT_EQ(g.has_cycle, !is_acyclic(dag)) << trial;
    // Dropping every edge marked on a cycle leaves a DAG; dropping only the unmarked ones
    // leaves each marked edge still on a cycle, so it cannot be acyclic when any is marked.
    Dag off_cycle(n);
    bool any_marked = false;
    for (const auto& e : g.edges) {
      if (!e.on_cycle) off_cycle.add_edge(e.from, e.to);
      any_marked = any_marked || e.on_cycle;
    }
    EXPECT_TRUE(is_acyclic(off_cycle)) << trial;
    EXPECT_EQ(any_marked, g.has_cycle) << trial;
    cyclic += g.has_cycle;
  }
  EXPECT_GT(cyclic, 20);  // both cases occur, so the comparison means something
  EXPECT_LT(cyclic, 280);
}

TEST(ConsensusGraph, RejectsBadInput) {
  EXPECT_THROW(consensus_graph({"a", "b"}, {{kNaN, 1.2}, {0.0, kNaN}}), InputError);
  EXPECT_THROW(consensus_graph({"a", "b"}, {{kNaN, 0.2}}), InputError);
  EXPECT_THROW(consensus_graph({"a", "b"}, {{kNaN, 0.2}, {0.1}}), InputError);
  EXPECT_THROW(consensus_graph({"a", "b"}, {{kNaN, 0.2}, {0.1, kNaN}}, 1.0), InputError);
}

TEST(ConsensusGraph, DotTextCarriesProbabilitiesWidthsAndIsolatedNodes) {
  std::vector<std::vector<double>> p = {{kNaN, 1.0, 0.0}, {0.0, kNaN, 0.0}, {0.0, 0.0, kNaN}};
  p[0][1] = 0.87;
  const std::string dot = consensus_dot(consensus_graph({"x", "y", "z"}, p));
  EXPECT_NE(dot.find("\"x\" -> \"y\""), std::string::npos);
  EXPECT_NE(dot.find("label=\" 0.87\""), std::string::npos) << dot;
  EXPECT_NE(dot.find("penwidth=3.96"), std::string::npos) << dot;  // 1 + 4 (0.87 - 0.5) / 0.5
  EXPECT_NE(dot.find("\"z\" [style=\"rounded,dashed\""), std::string::npos);  // no edge: muted
  EXPECT_EQ(dot.find("cycle"), std::string::npos);
  EXPECT_NE(dot.find("rankdir=TB"), std::string::npos);
  // Too many variables without an edge: they are left out of the drawing (and listed by the
  // caller, from isolated_variables).
  const auto g = consensus_graph({"x", "y", "z"}, p);
  EXPECT_EQ(isolated_variables(g), std::vector<int>{2});
  const std::string without = consensus_dot(g, {.max_isolated_drawn = 0, .left_to_right = true});
  EXPECT_EQ(without.find("\"z\""), std::string::npos);
  EXPECT_NE(without.find("\"x\" -> \"y\""), std::string::npos);
  EXPECT_NE(without.find("rankdir=LR"), std::string::npos);
}

TEST(ConsensusGraph, GraphvizOwnProgramParsesTheDotText) {
  // Names with quotes, spaces and backslashes must be escaped correctly.
  std::vector<std::vector<double>> p = {{kNaN, 0.8, 0.0}, {0.1, kNaN, 0.7}, {0.0, 0.0, kNaN}};
  const auto g = consensus_graph({"he said \"hi\"", "a b", "back\\slash"}, p);
  TempDir dir;
  write_text_file_atomically(dir.file("g.dot"), consensus_dot(g));
  ASSERT_FALSE(std::string(COVEY_DOT).empty());
  const auto r =
      testing_util::run_shell(std::string(COVEY_DOT) + " -Tplain '" + dir.file("g.dot") + "'");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("\"he said \\\"hi\\\"\""), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("\"a b\""), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("edge \"he said \\\"hi\\\"\" \"a b\""), std::string::npos) << r.out;
}

TEST(RenderDot, WritesSvgAndPng) {
  std::vector<std::vector<double>> p = {{kNaN, 0.87, 0.0}, {0.0, kNaN, 0.66}, {0.0, 0.0, kNaN}};
  const std::string dot = consensus_dot(consensus_graph({"smoking", "tar", "cancer"}, p));
  TempDir dir;
  render_dot(dot, dir.file("g.svg"));
  const auto parsed = testing_util::parse_xml_with_python(dir.file("g.svg"));
  ASSERT_EQ(parsed.exit_code, 0) << parsed.err;
  EXPECT_EQ(parsed.out.substr(0, 4), "svg\n");
  const std::string svg = testing_util::read_file(dir.file("g.svg"));
  for (const char* text :
       {">smoking</text>", ">tar</text>", ">cancer</text>", "> 0.87</text>", "> 0.66</text>"})
    EXPECT_NE(svg.find(text), std::string::npos) << text;

  render_dot(dot, dir.file("g.png"), 96);
  render_dot(dot, dir.file("g2.png"), 192);
  const auto at96 = testing_util::png_stats(dir.file("g.png"));
  const auto at192 = testing_util::png_stats(dir.file("g2.png"));
  EXPECT_GT(at96.width, 100);
  EXPECT_GT(at96.luminance_variance, 50.0);
  EXPECT_NEAR(at192.width, 2 * at96.width, 3);  // resolution scales the bitmap, not the layout
  EXPECT_NEAR(at192.height, 2 * at96.height, 3);
}

TEST(RenderDot, RejectsBrokenDotWithoutWritingAFile) {
  TempDir dir;
  EXPECT_THROW(render_dot("digraph { a -> ", dir.file("g.svg")), Error);
  EXPECT_FALSE(std::filesystem::exists(dir.file("g.svg")));
  EXPECT_THROW(render_dot("digraph { a -> b }", dir.file("g.gif")), InputError);
}

}  // namespace
}  // namespace covey
