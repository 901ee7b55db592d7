// The report: the convergence verdict against the thresholds of Vehtari et al. (2021), the
// report folder (every reference resolves, parsed by Python's html.parser; written atomically;
// the caution present), and a real browser (headless Chromium) loading every image and
// rendering a page that is not blank.
#include "covey/report/report.hpp"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <map>
#include <set>
#include <sstream>

#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"
#include "covey/report/plot.hpp"
#include "image_check.hpp"
#include "report_fixture.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

namespace fs = std::filesystem;
using testing_util::read_file;
using testing_util::run_shell;
using testing_util::synthetic_report_data;
using testing_util::SyntheticReportOptions;
using testing_util::TempDir;

ReportFeature feature(double rhat, double bulk, double tail) {
  ReportFeature f;
  f.kind = FeatureKind::kEdge;
  f.from = 0;
  f.to = 1;
  f.probability = 0.5;
  f.rhat = rhat;
  f.ess_bulk = bulk;
  f.ess_tail = tail;
  return f;
}

ReportData two_variables(std::vector<ReportFeature> features) {
  ReportData d;
  d.variables = {"a", "b"};
  d.features = std::move(features);
  return d;
}

TEST(Verdict, ThresholdsAreStrictAsRecommended) {
  // Vehtari, Gelman, Simpson, Carpenter & Buerkner (2021): R-hat < 1.01 and ESS > 400.
  using State = ConvergenceVerdict::State;
  EXPECT_EQ(assess_convergence(two_variables({feature(1.009, 401, 401)})).state, State::kConverged);
  EXPECT_EQ(assess_convergence(two_variables({feature(1.01, 401, 401)})).state,
            State::kNotConverged);
  EXPECT_EQ(assess_convergence(two_variables({feature(1.0, 400, 401)})).state,
            State::kNotConverged);
  EXPECT_EQ(assess_convergence(two_variables({feature(1.0, 401, 400)})).state,
            State::kNotConverged);
  EXPECT_EQ(assess_convergence(two_variables({feature(INFINITY, 900, 900)})).state,
            State::kNotConverged);
}

TEST(Verdict, UndefinedDiagnosticsAreCountedNotPassedOrFailed) {
  using State = ConvergenceVerdict::State;
  const auto nan = kUndefined;
  auto v = assess_convergence(two_variables({feature(nan, nan, nan), feature(1.001, 900, 800)}));
  EXPECT_EQ(v.state, State::kConverged);
  EXPECT_EQ(v.undefined, 1u);
  EXPECT_EQ(v.failing, 0u);
  EXPECT_DOUBLE_EQ(v.max_rhat, 1.001);
  EXPECT_DOUBLE_EQ(v.min_ess_bulk, 900);
  EXPECT_DOUBLE_EQ(v.min_ess_tail, 800);
  EXPECT_EQ(assess_convergence(two_variables({feature(nan, nan, nan)})).state,
            State::kUndetermined);
  EXPECT_EQ(assess_convergence(two_variables({})).state, State::kUndetermined);
  v = assess_convergence(
      two_variables({feature(1.2, 50, 60), feature(1.001, 900, 800), feature(1.0, 300, 800)}));
  EXPECT_EQ(v.failing, 2u);
  EXPECT_DOUBLE_EQ(v.max_rhat, 1.2);
  EXPECT_DOUBLE_EQ(v.min_ess_bulk, 50);
}

TEST(Report, FeatureLabelsNameTheRelation) {
  const std::vector<std::string> names = {"smoker", "cancer"};
  ReportFeature f;
  f.from = 0;
  f.to = 1;
  f.kind = FeatureKind::kEdge;
  EXPECT_EQ(feature_label(f, names), "smoker \u2192 cancer");
  f.kind = FeatureKind::kAdjacency;
  EXPECT_EQ(feature_label(f, names), "smoker \u2014 cancer");
  f.kind = FeatureKind::kAncestor;
  EXPECT_EQ(feature_label(f, names), "smoker \u21dd cancer");
  f.kind = FeatureKind::kScore;
  EXPECT_EQ(feature_label(f, names), "log score");
}

// Every src/href of the page, one "tag attribute value" per line, via Python's html.parser.
std::vector<std::string> references(const std::string& html_path) {
  const std::string script =
      "import sys, html.parser\n"
      "class P(html.parser.HTMLParser):\n"
      "    def handle_starttag(self, tag, attrs):\n"
      "        for k, v in attrs:\n"
      "            if k in ('src', 'href'): print(tag, k, v)\n"
      "P().feed(open(sys.argv[1], encoding='utf-8').read())\n";
  const auto r =
      run_shell(std::string(COVEY_REFERENCE_PYTHON) + " -c \"" + script + "\" '" + html_path + "'");
  EXPECT_EQ(r.exit_code, 0) << r.err;
  std::vector<std::string> lines;
  std::istringstream in(r.out);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

TEST(Report, EveryReferenceIsAFileInTheFolderAndEveryImageIsAPicture) {
  TempDir tmp;
  const std::string dir = tmp.file("report");
  write_report(synthetic_report_data(), dir);
  const auto refs = references(dir + "/index.html");
  std::set<std::string> images, links;
  for (const auto& line : refs) {
    std::istringstream fields(line);
    std::string tag, attribute, value;
    fields >> tag >> attribute >> value;
    if (value.starts_with("#")) continue;  // in-page anchors
    EXPECT_EQ(value.find(':'), std::string::npos) << "not a plain relative file: " << line;
    EXPECT_EQ(value.find('/'), std::string::npos) << "outside the folder: " << line;
    EXPECT_TRUE(fs::is_regular_file(dir + "/" + value)) << "missing: " << line;
    (tag == "img" ? images : links).insert(value);
  }
  const std::set<std::string> expected_images = {"trace.png", "rhat.png",      "ess.png",
                                                 "edges.png", "consensus.png", "comparison.png"};
  EXPECT_EQ(images, expected_images);
  for (const char* svg : {"trace.svg", "rhat.svg", "ess.svg", "edges.svg", "consensus.svg",
                          "comparison.svg", "consensus.dot"})
    EXPECT_TRUE(links.count(svg)) << svg;
  for (const auto& image : images) {
    const auto st = testing_util::png_stats(dir + "/" + image);
    EXPECT_GT(st.luminance_variance, 50.0) << image;
  }
  // Nothing in the folder that the page does not point to, except the page itself.
  for (const auto& entry : fs::directory_iterator(dir)) {
    const std::string name = entry.path().filename().string();
    EXPECT_TRUE(name == "index.html" || images.count(name) || links.count(name)) << name;
  }
}

TEST(Report, PageStatesVerdictCautionAndWorstFeatures) {
  TempDir tmp;
  ReportData d = synthetic_report_data({.converged = false});
  d.features[5].rhat = 1.75;  // the worst feature by far
  const std::string worst = feature_label(d.features[5], d.variables);
  d.cautions.push_back("Chains started from <the same> graph & more");
  write_report(d, tmp.file("r"));
  const std::string html = read_file(tmp.file("r") + "/index.html");
  EXPECT_NE(html.find("Not converged"), std::string::npos);
  EXPECT_NE(html.find("not proven cause"), std::string::npos);
  EXPECT_NE(html.find("qualified people and local rules"), std::string::npos);
  EXPECT_NE(html.find("class=\"caution\""), std::string::npos);
  EXPECT_NE(html.find("Chains started from &lt;the same&gt; graph &amp; more"), std::string::npos);
  // The worst feature heads the table of worst features.
  const auto table = html.find("id=\"worst\"");
  ASSERT_NE(table, std::string::npos);
  const auto first_row = html.find("<tbody>", table);
  EXPECT_NE(html.find(worst, first_row), std::string::npos);
  EXPECT_LT(html.find(worst, first_row), html.find("</tr>", first_row));
  EXPECT_NE(html.find("1.750"), std::string::npos);
  // No network: no scheme anywhere in src/href and no external style or script.
  EXPECT_EQ(html.find("http://"), std::string::npos);
  EXPECT_EQ(html.find("https://"), std::string::npos);
  EXPECT_EQ(html.find("<link"), std::string::npos);

  write_report(synthetic_report_data({.converged = true}), tmp.file("r"), true);  // replaces it
  const std::string ok = read_file(tmp.file("r") + "/index.html");
  EXPECT_NE(ok.find("\u2713 Converged"), std::string::npos);
  EXPECT_EQ(ok.find("Not converged"), std::string::npos);
}

TEST(Report, VerdictUsesTheLibraryWordingWithItsCaveats) {
  TempDir tmp;
  // Three constant edges are undefined: the page counts them and never claims "All".
  ReportData d = synthetic_report_data({.converged = true, .constant_features = 3});
  d.run.chains = 1;
  const VerdictText text = report_verdict_text(d);
  write_report(d, tmp.file("r"));
  const std::string html = read_file(tmp.file("r") + "/index.html");
  EXPECT_EQ(html.find("All "), std::string::npos);
  EXPECT_NE(html.find("not assessed (R-hat or bulk ESS undefined"), std::string::npos);
  EXPECT_NE(html.find("R-hat: "), std::string::npos);
  EXPECT_NE(html.find("tail ESS: "), std::string::npos);
  ASSERT_FALSE(text.caveats.empty());
  EXPECT_NE(html.find("split R-hat"), std::string::npos);
}

TEST(Report, AnswersWhatTheNetworkIsAndTitlesTheComparison) {
  TempDir tmp;
  const ReportData d = synthetic_report_data();
  write_report(d, tmp.file("r"));
  const std::string html = read_file(tmp.file("r") + "/index.html");
  // The most probable edge heads the table of links, with its probability and MCSE.
  const ReportFeature* best = nullptr;
  for (const auto& f : d.features)
    if (f.kind == FeatureKind::kEdge && (!best || f.probability > best->probability)) best = &f;
  ASSERT_NE(best, nullptr);
  const auto section = html.find("id=\"network\"");
  ASSERT_NE(section, std::string::npos);
  const auto first_row = html.find("<tbody>", section);
  const std::string label = plot::markup_escape(feature_label(*best, d.variables));
  EXPECT_LT(html.find(label, first_row), html.find("</tr>", first_row));
  EXPECT_NE(html.find("Adjacency (either direction)", section), std::string::npos);
  // The comparison is titled by what it compares.
  EXPECT_NE(html.find("<h2>Edge probabilities: " + plot::markup_escape(d.comparison->label_a) +
                      " against "),
            std::string::npos);
  EXPECT_EQ(html.find("Restricted against unrestricted"), std::string::npos);
}

TEST(Report, WorstFeaturesAreDrawnByChainAndBadTracesRefused) {
  TempDir tmp;
  ReportData d = synthetic_report_data();
  FeatureTrace trace;
  trace.feature = 5;
  trace.chains = {{{10, 20, 30}, {0.0, 0.5, 0.33}}, {{10, 20, 30}, {1.0, 1.0, 0.67}}};
  d.feature_traces = {trace};
  write_report(d, tmp.file("r"));
  const std::string html = read_file(tmp.file("r") + "/index.html");
  EXPECT_NE(html.find("feature-trace-1.png"), std::string::npos);
  EXPECT_NE(html.find("Running probability of " +
                      plot::markup_escape(feature_label(d.features[5], d.variables))),
            std::string::npos);
  EXPECT_GT(testing_util::png_stats(tmp.file("r") + "/feature-trace-1.png").luminance_variance,
            50.0);
  d.feature_traces[0].feature = d.features.size();
  EXPECT_THROW(write_report(d, tmp.file("r2")), InputError);
  d.feature_traces[0].feature = 5;
  d.feature_traces[0].chains[1].running_mean.pop_back();
  EXPECT_THROW(write_report(d, tmp.file("r2")), InputError);
  EXPECT_FALSE(fs::exists(tmp.file("r2")));
}

TEST(Report, ConsensusCycleIsDrawnAndNoted) {
  TempDir tmp;
  write_report(synthetic_report_data({.with_cycle = true}), tmp.file("r"));
  EXPECT_NE(read_file(tmp.file("r") + "/index.html").find("has a directed cycle"),
            std::string::npos);
  EXPECT_NE(read_file(tmp.file("r") + "/consensus.dot").find("directed cycle"), std::string::npos);
  EXPECT_GT(testing_util::png_stats(tmp.file("r") + "/consensus.png").luminance_variance, 50.0);
}

TEST(Report, MinimalDataStillMakesAPage) {
  TempDir tmp;
  ReportData d;
  d.variables = {"x"};
  write_report(d, tmp.file("r"));
  const std::string html = read_file(tmp.file("r") + "/index.html");
  EXPECT_NE(html.find("Not assessed"), std::string::npos);
  EXPECT_NE(html.find("not proven cause"), std::string::npos);
  EXPECT_EQ(html.find("<img"), std::string::npos);
}

std::vector<std::string> temporaries_beside(const std::string& dir) {
  std::vector<std::string> found;
  for (const auto& entry : fs::directory_iterator(fs::path(dir).parent_path()))
    if (entry.path().filename().string().find(".tmp-") != std::string::npos)
      found.push_back(entry.path().string());
  return found;
}

TEST(Report, ReplacesAnEarlierReportOnlyOnSuccess) {
  TempDir tmp;
  const std::string dir = tmp.file("report");
  ReportData first = synthetic_report_data();
  first.title = "First run";
  write_report(first, dir);
  ReportData second = synthetic_report_data({.with_comparison = false});
  second.title = "Second run";
  // An earlier report is replaced only when asked (the CLI's --force).
  try {
    write_report(second, dir);
    ADD_FAILURE() << "an earlier report was replaced without overwrite";
  } catch (const OptionError& e) {
    EXPECT_NE(e.message_template().find("{overwrite}"), std::string::npos) << e.what();
  }
  EXPECT_NE(read_file(dir + "/index.html").find("First run"), std::string::npos);
  write_report(second, dir, true);
  std::string html = read_file(dir + "/index.html");
  EXPECT_NE(html.find("Second run"), std::string::npos);
  EXPECT_EQ(html.find("First run"), std::string::npos);
  EXPECT_FALSE(fs::exists(dir + "/comparison.png"));  // the old folder's files are gone
  EXPECT_TRUE(temporaries_beside(dir).empty());

  // A failure after several figures were written (the consensus step rejects a probability
  // above 1) leaves the earlier report as it was and no temporary folder behind.
  ReportData broken = synthetic_report_data();
  broken.title = "Broken run";
  broken.edge_probability[0][1] = 1.5;
  EXPECT_THROW(write_report(broken, dir, true), InputError);
  html = read_file(dir + "/index.html");
  EXPECT_NE(html.find("Second run"), std::string::npos);
  EXPECT_TRUE(temporaries_beside(dir).empty());

  // Inconsistent data is refused before anything is written.
  ReportData bad_index = synthetic_report_data();
  bad_index.features[0].to = 99;
  EXPECT_THROW(write_report(bad_index, dir, true), InputError);
  ReportData bad_trace = synthetic_report_data();
  bad_trace.traces[1].steps.pop_back();
  EXPECT_THROW(write_report(bad_trace, dir, true), InputError);
  EXPECT_NE(read_file(dir + "/index.html").find("Second run"), std::string::npos);
}

TEST(Report, RefusesToReplaceAFolderThatIsNotAReport) {
  TempDir tmp;
  const std::string dir = tmp.file("precious");
  fs::create_directory(dir);
  write_text_file_atomically(dir + "/notes.txt", "keep me");
  EXPECT_THROW(write_report(synthetic_report_data(), dir), InputError);
  EXPECT_EQ(read_file(dir + "/notes.txt"), "keep me");
  EXPECT_TRUE(temporaries_beside(dir).empty());
  write_text_file_atomically(tmp.file("plain_file"), "x");
  EXPECT_THROW(write_report(synthetic_report_data(), tmp.file("plain_file")), InputError);
  EXPECT_THROW(write_report(synthetic_report_data(), tmp.file("no/such/parent")), InputError);
  // An empty folder is fine (a user made it for the report).
  fs::create_directory(tmp.file("empty"));
  write_report(synthetic_report_data(), tmp.file("empty"));
  EXPECT_TRUE(fs::exists(tmp.file("empty") + "/index.html"));
}

TEST(AtomicDirectory, CommitsWholeOrNotAtAll) {
  TempDir tmp;
  const std::string target = tmp.file("out");
  {
    AtomicDirectory out(target);
    write_text_file_atomically(out.temp_path() + "/a.txt", "new");
    EXPECT_FALSE(fs::exists(target));
  }  // not committed
  EXPECT_FALSE(fs::exists(target));
  EXPECT_TRUE(temporaries_beside(target).empty());
  {
    AtomicDirectory out(target + "/");  // a trailing slash names the same folder
    write_text_file_atomically(out.temp_path() + "/a.txt", "first");
    out.commit();
  }
  EXPECT_EQ(read_file(target + "/a.txt"), "first");
  EXPECT_EQ(fs::status(target).permissions() & fs::perms::others_read, fs::perms::others_read);
  {
    AtomicDirectory out(target);
    write_text_file_atomically(out.temp_path() + "/b.txt", "second");
    EXPECT_EQ(read_file(target + "/a.txt"), "first");  // untouched until commit
    out.commit();
  }
  EXPECT_FALSE(fs::exists(target + "/a.txt"));
  EXPECT_EQ(read_file(target + "/b.txt"), "second");
  EXPECT_TRUE(temporaries_beside(target).empty());
}

// --- in a real browser -------------------------------------------------------------------------

std::string chromium(const std::string& arguments, const std::string& profile) {
  // Flags keep the browser off the network and away from the user's profile; `timeout` turns a
  // hung browser into a failure instead of a stalled test run.
  return std::string("HOME='") + profile + "' timeout 90 '" + COVEY_CHROMIUM +
         "' --headless --no-sandbox --disable-gpu --disable-quic --no-first-run "
         "--disable-background-networking --disable-component-update --disable-sync "
         "--disable-extensions --hide-scrollbars --user-data-dir='" +
         profile + "/profile' " + arguments;
}

// The counts the page's own script writes as attributes of <body> once loaded (-1: absent),
// in a window `width` px wide.
std::map<std::string, int> page_checks(const std::string& page, const std::string& profile,
                                       int width = 1280) {
  const auto r =
      run_shell(chromium("--virtual-time-budget=5000 --window-size=" + std::to_string(width) +
                             ",1200 --dump-dom 'file://" + page + "'",
                         profile));
  EXPECT_EQ(r.exit_code, 0) << r.err;
  std::map<std::string, int> checks;
  for (const char* name :
       {"data-images-loaded", "data-images-total", "data-figures-clipped", "data-page-overflow"}) {
    const std::string key = std::string(name) + "=\"";
    const auto at = r.out.find(key);
    checks[name] = at == std::string::npos ? -1 : std::atoi(r.out.c_str() + at + key.size());
    EXPECT_GE(checks[name], 0) << "the page's check did not run; DOM:\n" << r.out.substr(0, 2000);
  }
  return checks;
}

std::pair<int, int> images_loaded(const std::string& page, const std::string& profile) {
  const auto checks = page_checks(page, profile);
  return {checks.at("data-images-loaded"), checks.at("data-images-total")};
}

// Whether every node box of a graphviz SVG lies inside its viewBox, by Python's xml.etree: the
// node shapes' coordinates, moved by the graph's translate(), against the viewBox.
testing_util::CommandResult node_boxes_inside_view_box(const std::string& svg) {
  const std::string script =
      "import re, sys, xml.etree.ElementTree as E\n"
      "root = E.parse(sys.argv[1]).getroot()\n"
      "x0, y0, w, h = map(float, root.get('viewBox').split())\n"
      "ns = '{http://www.w3.org/2000/svg}'\n"
      "graph = root.find(ns + 'g')\n"
      "tx, ty = map(float, re.search(r'translate\\(([-\\d.]+) ([-\\d.]+)\\)', "
      "graph.get('transform')).groups())\n"
      "bad = 0; nodes = 0\n"
      "for g in graph.iter(ns + 'g'):\n"
      "    if g.get('class') != 'node': continue\n"
      "    nodes += 1\n"
      "    for shape in g:\n"
      "        text = shape.get('points') or shape.get('d') or ''\n"
      "        xy = [float(v) for v in re.findall(r'-?\\d+(?:\\.\\d+)?', text)]\n"
      "        for x, y in zip(xy[0::2], xy[1::2]):\n"
      "            if not (x0 <= x + tx <= x0 + w and y0 <= y + ty <= y0 + h): bad += 1\n"
      "print(nodes, bad)\n"
      "sys.exit(1 if bad or not nodes else 0)\n";
  const std::string path = svg + ".check.py";
  testing_util::write_file(path, script);
  return run_shell(std::string(COVEY_REFERENCE_PYTHON) + " '" + path + "' '" + svg + "'");
}

TEST(ReportInBrowser, ChromiumLoadsEveryImageAndDrawsThePage) {
  ASSERT_TRUE(fs::exists(COVEY_CHROMIUM))
      << "chromium not found (Debian package `chromium`; `make deps` installs it)";
  TempDir tmp;
  const std::string dir = tmp.file("report");
  write_report(synthetic_report_data({.converged = false}), dir);
  const auto [loaded, total] = images_loaded(dir + "/index.html", tmp.path());
  EXPECT_EQ(total, 6);
  EXPECT_EQ(loaded, total);

  // Control: with one image gone the count drops, so the check above can fail.
  fs::copy(dir, tmp.file("broken"));
  fs::remove(tmp.file("broken") + "/edges.png");
  const auto [loaded_broken, total_broken] =
      images_loaded(tmp.file("broken") + "/index.html", tmp.path());
  EXPECT_EQ(total_broken, 6);
  EXPECT_EQ(loaded_broken, 5);

  const std::string shot = tmp.file("shot.png");
  const auto r = run_shell(chromium(
      "--screenshot='" + shot + "' --window-size=1280,2400 'file://" + dir + "/index.html'",
      tmp.path()));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto st = testing_util::png_stats(shot);
  EXPECT_EQ(st.width, 1280);
  EXPECT_EQ(st.height, 2400);
  EXPECT_GT(st.luminance_variance, 200.0);
  EXPECT_GT(st.non_white_fraction, 0.05);
  // The "Not converged" badge (Okabe-Ito vermillion) is on screen near the top.
  EXPECT_GT(testing_util::count_pixels_near(shot, 0xd55e00, 20, 0, 0, 1, 0.2), 2000u);
  if (const char* keep = std::getenv("COVEY_KEEP_SCREENSHOT"))
    fs::copy_file(shot, keep, fs::copy_options::overwrite_existing);
}

// Thirty variables: the page is no wider than the window, every figure (the consensus graph
// included) fits its card, and the consensus SVG holds every node box inside its viewBox.
TEST(ReportInBrowser, ThirtyVariablesFitThePage) {
  ASSERT_TRUE(fs::exists(COVEY_CHROMIUM)) << "chromium not found";
  TempDir tmp;
  const std::string dir = tmp.file("report");
  ReportData d = synthetic_report_data({.variables = 30, .converged = false});
  d.variables[7] = "grade";  // the demo's name that was clipped
  write_report(d, dir);
  // A window narrower than the 980 px page: what fits here fits on a wider screen.
  const auto checks = page_checks(dir + "/index.html", tmp.path(), 800);
  EXPECT_EQ(checks.at("data-images-loaded"), checks.at("data-images-total"));
  EXPECT_EQ(checks.at("data-figures-clipped"), 0);
  EXPECT_EQ(checks.at("data-page-overflow"), 0);
  const auto inside = node_boxes_inside_view_box(dir + "/consensus.svg");
  EXPECT_EQ(inside.exit_code, 0) << inside.out << inside.err;
  EXPECT_NE(inside.out.find("30 0"), std::string::npos) << inside.out;  // all 30 nodes drawn

  // Controls: figures at their natural size stick out of their cards, and a viewBox cut in
  // half leaves node boxes outside, so both checks can fail.
  fs::copy(dir, tmp.file("natural"));
  const std::string page = tmp.file("natural") + "/index.html";
  std::string html = read_file(page);
  html.replace(html.find("</style>"), 0, "figure img { max-width: none !important; }");
  testing_util::write_file(page, html);
  EXPECT_GT(page_checks(page, tmp.path()).at("data-figures-clipped"), 0);
  std::string svg = read_file(dir + "/consensus.svg");
  const auto at = svg.find("viewBox=\"0.00 0.00 ");
  ASSERT_NE(at, std::string::npos);
  const auto end = svg.find('"', at + 9);
  std::istringstream box(svg.substr(at + 9, end - at - 9));
  double x0, y0, w, h;
  box >> x0 >> y0 >> w >> h;
  svg.replace(at, end - at + 1,
              "viewBox=\"0 0 " + std::to_string(w / 2) + " " + std::to_string(h / 2) + "\"");
  testing_util::write_file(tmp.file("cut.svg"), svg);
  EXPECT_NE(node_boxes_inside_view_box(tmp.file("cut.svg")).exit_code, 0);
}

}  // namespace
}  // namespace covey
