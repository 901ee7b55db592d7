// The plotting layer: PNGs read back with cairo (size, not blank, the expected colours where
// the data put them), SVGs parsed by Python's xml.etree (well-formed, holding their labels).
#include "covey/report/plot.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>

#include "covey/core/error.hpp"
#include "image_check.hpp"
#include "test_util.hpp"

namespace covey::plot {
namespace {

using testing_util::count_pixels_near;
using testing_util::parse_xml_with_python;
using testing_util::png_stats;
using testing_util::TempDir;

constexpr std::uint32_t kBlueRgb = 0x0072b2, kOrangeRgb = 0xe69f00, kVermillionRgb = 0xd55e00;

TEST(Palette, SeriesColoursAreTheOkabeItoPalette) {
  // Hex values as published by Okabe & Ito (2008), "Color Universal Design", in covey's order.
  const char* expected[] = {"#0072b2", "#e69f00", "#009e73", "#cc79a7",
                            "#56b4e9", "#d55e00", "#000000", "#f0e442"};
  for (int i = 0; i < 8; ++i) EXPECT_EQ(to_hex(series_colour(i)), expected[i]) << i;
  EXPECT_EQ(to_hex(series_colour(8)), to_hex(series_colour(0)));
}

TEST(Palette, SequentialColoursFollowColorBrewerBlues) {
  // End and middle stops of ColorBrewer's 9-class "Blues" (values from memory of
  // colorbrewer2.org); luminance must fall as the value rises so darker means more probable.
  EXPECT_EQ(to_hex(sequential_colour(0.0)), "#f7fbff");
  EXPECT_EQ(to_hex(sequential_colour(0.5)), "#6baed6");
  EXPECT_EQ(to_hex(sequential_colour(1.0)), "#08306b");
  double previous = INFINITY;
  for (int i = 0; i <= 100; ++i) {
    const Colour c = sequential_colour(i / 100.0);
    const double luminance = 0.2126 * c.r + 0.7152 * c.g + 0.0722 * c.b;
    EXPECT_LT(luminance, previous) << i;
    previous = luminance;
  }
}

LinePlot two_series_plot() {
  LinePlot p;
  p.title = "Trace title";
  p.x_label = "step axis";
  p.y_label = "score axis";
  for (int s = 0; s < 2; ++s) {
    Series series;
    series.name = "chain " + std::to_string(s + 1);
    for (int i = 0; i < 300; ++i) {
      series.x.push_back(i);
      series.y.push_back(std::sin(i / 20.0 + s) * 10 - 100);
    }
    p.series.push_back(series);
  }
  return p;
}

TEST(LinePlot, PngHasTheScaledSizeAndShowsBothSeries) {
  TempDir dir;
  const std::string path = dir.file("trace.png");
  write_plot(two_series_plot(), path, FigureSize{880, 400, 2.0});
  const auto st = png_stats(path);
  EXPECT_EQ(st.width, 1760);
  EXPECT_EQ(st.height, 800);
  EXPECT_GT(st.luminance_variance, 100.0);
  EXPECT_GT(st.non_white_fraction, 0.01);
  EXPECT_LT(st.non_white_fraction, 0.6);
  EXPECT_GT(count_pixels_near(path, kBlueRgb, 40), 500u);
  EXPECT_GT(count_pixels_near(path, kOrangeRgb, 40), 500u);
}

TEST(LinePlot, SvgIsWellFormedAndHoldsItsLabels) {
  TempDir dir;
  const std::string path = dir.file("trace.svg");
  write_plot(two_series_plot(), path, FigureSize{880, 400, 2.0});
  const auto parsed = parse_xml_with_python(path);
  ASSERT_EQ(parsed.exit_code, 0) << parsed.err;
  EXPECT_EQ(parsed.out.substr(0, 4), "svg\n");
  EXPECT_NE(parsed.out.find("Trace title\n"), std::string::npos);
  for (const char* label : {"step axis", "score axis", "chain 1", "chain 2", "\u2212100"})
    EXPECT_NE(parsed.out.find(label), std::string::npos) << label;
  const std::string text = testing_util::read_file(path);
  EXPECT_NE(text.find("width=\"880px\""), std::string::npos);
  EXPECT_NE(text.find("height=\"400px\""), std::string::npos);
}

TEST(LinePlot, LongSeriesKeepSpikesWhenThinnedToPixels) {
  // 200000 points on an 880 px plot are drawn as per-column ranges: a single spike must still
  // reach the top of the plot (a plain every-k-th-point thinning would usually drop it).
  LinePlot p;
  Series s;
  for (int i = 0; i < 200000; ++i) {
    s.x.push_back(i);
    s.y.push_back(i == 123457 ? 10.0 : 0.0);
  }
  p.series.push_back(s);
  TempDir dir;
  const std::string path = dir.file("long.png");
  write_plot(p, path, FigureSize{880, 400, 1.0});
  // Zero sits near the bottom; only the spike puts blue into the upper third.
  EXPECT_GT(testing_util::count_pixels_if(path, testing_util::bluish, 0, 0, 1, 0.33), 10u);
  s.y[123457] = 0.0;
  s.y[0] = 10.0;  // now the first point is the top: the spike column moves to the left edge
  p.series = {s};
  write_plot(p, path, FigureSize{880, 400, 1.0});
  EXPECT_EQ(testing_util::count_pixels_if(path, testing_util::bluish, 0.3, 0, 1, 0.33), 0u);
}

TEST(LinePlot, RejectsUnequalLengthsAndUnknownTypesWithoutTouchingTheFile) {
  TempDir dir;
  const std::string path = dir.file("trace.png");
  write_plot(two_series_plot(), path);
  const std::string before = testing_util::read_file(path);
  LinePlot bad = two_series_plot();
  bad.series[1].y.pop_back();
  EXPECT_THROW(write_plot(bad, path), InputError);
  EXPECT_EQ(testing_util::read_file(path), before);
  EXPECT_THROW(write_plot(two_series_plot(), dir.file("trace.jpg")), InputError);
  EXPECT_FALSE(std::filesystem::exists(dir.file("trace.jpg")));
  EXPECT_THROW(write_plot(two_series_plot(), path, FigureSize{0, 400, 2.0}), InputError);
}

StripPlot ess_plot(bool with_failure) {
  StripPlot p;
  p.title = "ESS title";
  p.x_label = "ess axis";
  p.x_scale = Scale::kLog10;
  p.threshold = 400;
  p.above_is_bad = false;
  p.threshold_label = "ESS 400";
  StripRow bulk{"bulk", {}}, tail{"tail", {}};
  for (int i = 0; i < 200; ++i) {
    bulk.values.push_back(500 + 20 * i);
    tail.values.push_back(450 + 25 * i);
  }
  if (with_failure) tail.values.push_back(50);
  tail.values.push_back(kNaN);
  tail.values.push_back(kNaN);
  p.rows = {bulk, tail};
  return p;
}

TEST(StripPlot, FailingValuesAndOnlyThoseAreVermillion) {
  TempDir dir;
  const std::string failing = dir.file("fail.png"), passing = dir.file("pass.png");
  write_plot(ess_plot(true), failing);
  write_plot(ess_plot(false), passing);
  EXPECT_GT(count_pixels_near(failing, kVermillionRgb, 30), 50u);
  EXPECT_EQ(count_pixels_near(passing, kVermillionRgb, 30), 0u);
  EXPECT_GT(testing_util::count_pixels_if(passing, testing_util::bluish), 2000u);
  EXPECT_GT(png_stats(passing).luminance_variance, 50.0);
}

TEST(StripPlot, SvgNamesRowsCountsAndLogTicks) {
  TempDir dir;
  const std::string path = dir.file("ess.svg");
  write_plot(ess_plot(true), path);
  const auto parsed = parse_xml_with_python(path);
  ASSERT_EQ(parsed.exit_code, 0) << parsed.err;
  // Values span 50..5450 (about two decades): ticks at 1, 2 and 5 times powers of ten.
  for (const char* label : {"ESS title", "ess axis", "ESS 400", "bulk", "tail", "100", "1000",
                            "200", "all 200 pass", "1 of 201 fail", "2 undefined"})
    EXPECT_NE(parsed.out.find(label), std::string::npos) << label;
}

TEST(StripPlot, InfiniteValuesSitAtTheEdgeAndFail) {
  StripPlot p;
  p.threshold = 1.01;
  p.threshold_label = "R-hat 1.01";
  p.rows = {{"edges", {1.0, 1.002, INFINITY}}};
  TempDir dir;
  write_plot(p, dir.file("rhat.svg"));
  const auto parsed = parse_xml_with_python(dir.file("rhat.svg"));
  ASSERT_EQ(parsed.exit_code, 0) << parsed.err;
  EXPECT_NE(parsed.out.find("1 of 3 fail"), std::string::npos);
  EXPECT_NE(parsed.out.find("\u221e"), std::string::npos);
}

HeatMap small_map(double corner) {
  HeatMap m;
  m.title = "Heat title";
  m.row_title = "from";
  m.column_title = "to";
  m.colour_title = "P";
  m.row_names = m.column_names = {"alpha", "beta", "gamma"};
  m.values = {{kNaN, corner, 0.0}, {0.0, kNaN, 0.0}, {0.0, 0.0, kNaN}};
  return m;
}

TEST(HeatMap, CellColourFollowsTheValue) {
  TempDir dir;
  const std::string one = dir.file("one.png"), zero = dir.file("zero.png");
  const HeatMap with_one = small_map(1.0), with_zero = small_map(0.0);
  write_plot(with_one, one, preferred_size(with_one));
  write_plot(with_zero, zero, preferred_size(with_zero));
  const std::uint32_t darkest = 0x08306b;
  // The colour bar holds a little of the darkest colour in both; a full cell adds a lot more
  // (a cell is at least 40 x 40 px at scale 2).
  EXPECT_GT(count_pixels_near(one, darkest, 6), count_pixels_near(zero, darkest, 6) + 1500);
  const auto st = png_stats(one);
  const FigureSize size = preferred_size(with_one);
  EXPECT_EQ(st.width, 2 * size.width);
  EXPECT_EQ(st.height, 2 * size.height);
  write_plot(with_one, dir.file("map.svg"), size);
  const auto svg = parse_xml_with_python(dir.file("map.svg"));
  ASSERT_EQ(svg.exit_code, 0) << svg.err;
  for (const char* label : {"Heat title", "alpha", "beta", "gamma", "from", "to", "1.00"})
    EXPECT_NE(svg.out.find(label), std::string::npos) << label;
}

TEST(HeatMap, PreferredSizeGrowsWithTheMatrixAndFitsLongNames) {
  HeatMap small = small_map(0.5), wide = small_map(0.5);
  wide.row_names = wide.column_names = {"a_rather_long_variable_name", "b", "c"};
  EXPECT_GT(preferred_size(wide).width, preferred_size(small).width);
  HeatMap big;
  for (int i = 0; i < 30; ++i) big.row_names.push_back("v" + std::to_string(i));
  big.column_names = big.row_names;
  big.values.assign(30, std::vector<double>(30, 0.2));
  EXPECT_GT(preferred_size(big).height, preferred_size(small).height);
  TempDir dir;
  write_plot(big, dir.file("big.png"), preferred_size(big));
  EXPECT_GT(png_stats(dir.file("big.png")).luminance_variance, 20.0);
}

TEST(HeatMap, RejectsRaggedMatrices) {
  HeatMap m = small_map(0.5);
  m.values[1].pop_back();
  TempDir dir;
  EXPECT_THROW(write_plot(m, dir.file("m.png"), FigureSize{}), InputError);
  m = small_map(0.5);
  m.values.pop_back();
  EXPECT_THROW(write_plot(m, dir.file("m.png"), FigureSize{}), InputError);
}

TEST(ScatterPlot, LabelsOnlyThePointsFarFromTheDiagonal) {
  ScatterPlot p;
  p.title = "Scatter title";
  p.x_label = "under A";
  p.y_label = "under B";
  p.points = {{0.1, 0.1, kNaN, 0.01, "on the line"},
              {0.3, 0.7, 0.02, 0.03, "far above"},
              {0.8, 0.5, kNaN, kNaN, "far below"},
              {0.5, 0.51, kNaN, kNaN, "close"}};
  TempDir dir;
  write_plot(p, dir.file("s.svg"), FigureSize{600, 560});
  const auto parsed = parse_xml_with_python(dir.file("s.svg"));
  ASSERT_EQ(parsed.exit_code, 0) << parsed.err;
  for (const char* label : {"Scatter title", "under A", "under B", "far above", "far below"})
    EXPECT_NE(parsed.out.find(label), std::string::npos) << label;
  EXPECT_EQ(parsed.out.find("on the line"), std::string::npos);
  EXPECT_EQ(parsed.out.find("close"), std::string::npos);
  write_plot(p, dir.file("s.png"), FigureSize{600, 560});
  const auto st = png_stats(dir.file("s.png"));
  EXPECT_EQ(st.width, 1200);
  EXPECT_EQ(st.height, 1120);
  EXPECT_GT(count_pixels_near(dir.file("s.png"), kBlueRgb, 50), 100u);
}

TEST(Plots, EmptyDataStillRendersAFigure) {
  TempDir dir;
  write_plot(LinePlot{"Empty", "x", "y", {}}, dir.file("line.png"));
  write_plot(StripPlot{}, dir.file("strip.png"));
  write_plot(ScatterPlot{}, dir.file("scatter.png"));
  for (const char* f : {"line.png", "strip.png", "scatter.png"})
    EXPECT_GT(png_stats(dir.file(f)).luminance_variance, 1.0) << f;
}

}  // namespace
}  // namespace covey::plot
