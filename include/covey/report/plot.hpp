#pragma once
// A small plotting layer over cairo for covey's report: line plots (trace plots of the log score
// per chain), strip plots (the distribution of a diagnostic over features, against a threshold),
// heat maps (the edge-probability matrix) and scatter plots against the diagonal (two estimates
// of the same probabilities). Every plot renders to PNG (cairo image surface, at png_scale pixels
// per unit for sharp text) or SVG (cairo SVG surface, sized in px), chosen by the extension of
// the output path, and is written atomically. Colours come from the Okabe & Ito (2008)
// colour-blind-safe palette; the heat map uses ColorBrewer's single-hue "Blues" ramp.
//
// Cairo's SVG surface draws text as glyph outlines, so each SVG also gets a <title> and a <desc>
// holding every string drawn: the file stays searchable and screen readers can name it.
#include <limits>
#include <string>
#include <string_view>
#include <vector>

namespace covey::plot {

inline constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

struct Colour {
  double r = 0, g = 0, b = 0;  // each in [0, 1]
};

// The Okabe–Ito palette, named (hex values as published by Okabe & Ito 2008).
namespace okabe_ito {
inline constexpr Colour kBlack{0x00 / 255.0, 0x00 / 255.0, 0x00 / 255.0};
inline constexpr Colour kOrange{0xE6 / 255.0, 0x9F / 255.0, 0x00 / 255.0};
inline constexpr Colour kSkyBlue{0x56 / 255.0, 0xB4 / 255.0, 0xE9 / 255.0};
inline constexpr Colour kBluishGreen{0x00 / 255.0, 0x9E / 255.0, 0x73 / 255.0};
inline constexpr Colour kYellow{0xF0 / 255.0, 0xE4 / 255.0, 0x42 / 255.0};
inline constexpr Colour kBlue{0x00 / 255.0, 0x72 / 255.0, 0xB2 / 255.0};
inline constexpr Colour kVermillion{0xD5 / 255.0, 0x5E / 255.0, 0x00 / 255.0};
inline constexpr Colour kReddishPurple{0xCC / 255.0, 0x79 / 255.0, 0xA7 / 255.0};
}  // namespace okabe_ito

// Colour of the i-th data series: the palette ordered for contrast on white (blue, orange,
// bluish green, reddish purple, sky blue, vermillion, black, yellow), cycling after 8.
Colour series_colour(int index);
// "#rrggbb", so HTML can share the plots' palette.
std::string to_hex(Colour colour);
// Text made safe inside SVG or HTML markup and attribute values: & < > " ' escaped.
std::string markup_escape(std::string_view text);
// The heat-map colour of a value in [0, 1] (light for 0, dark blue for 1).
Colour sequential_colour(double value);

struct FigureSize {
  int width = 880;  // in px (CSS pixels); the SVG has this size
  int height = 400;
  double png_scale = 2.0;  // PNG pixels per px: the PNG is width*scale x height*scale pixels
};

enum class Scale { kLinear, kLog10 };

// --- line plot -------------------------------------------------------------------------------

struct Series {
  std::string name;          // shown in the legend
  std::vector<double> x, y;  // same length; non-finite points break the line
};

struct LinePlot {
  std::string title, x_label, y_label;
  std::vector<Series> series;  // series beyond the 8th colour get dashed lines
};

// --- strip plot ------------------------------------------------------------------------------

struct StripRow {
  std::string name;
  // NaN values are not drawn but counted as undefined; +infinity is drawn at the right edge.
  std::vector<double> values;
};

// One row of dots per group along a common x axis, with a threshold line; dots on the bad side
// of the threshold are drawn larger in vermillion and counted at the right of their row.
struct StripPlot {
  std::string title, x_label;
  std::vector<StripRow> rows;
  Scale x_scale = Scale::kLinear;  // kLog10 needs positive values (others are clamped)
  double threshold = kNaN;         // NaN: no threshold
  bool above_is_bad = true;        // values above the threshold fail (R-hat), else below (ESS)
  std::string threshold_label;     // e.g. "R-hat 1.01"
};

// --- heat map --------------------------------------------------------------------------------

struct HeatMap {
  std::string title, row_title, column_title, colour_title;
  std::vector<std::string> row_names, column_names;
  std::vector<std::vector<double>> values;  // [row][column] in [0, 1]; NaN: no value (grey)
  bool show_values = true;  // print values >= 0.01 in cells large enough to hold them
};

// A size that gives square cells of a readable size for this matrix and fits its labels.
FigureSize preferred_size(const HeatMap& map);

// --- scatter plot ----------------------------------------------------------------------------

struct ScatterPoint {
  double x = kNaN, y = kNaN;
  double x_error = kNaN, y_error = kNaN;  // half-lengths of the error bars; NaN: none
  std::string label;                      // shown for the points farthest from the diagonal
};

// Both axes share one range so the diagonal y = x runs at 45 degrees through a square plot.
struct ScatterPlot {
  std::string title, x_label, y_label;
  std::vector<ScatterPoint> points;
  double min = 0.0, max = 1.0;
  int labelled_points = 5;           // label up to this many points farthest from the diagonal
  double label_min_distance = 0.02;  // ... but only those at least this far from it
};

// Each writes `path` (.png or .svg) atomically; throws InputError for an unknown extension or
// inconsistent data (lengths that differ), Error when cairo fails.
void write_plot(const LinePlot& plot, const std::string& path, const FigureSize& size = {});
void write_plot(const StripPlot& plot, const std::string& path, const FigureSize& size = {});
void write_plot(const HeatMap& plot, const std::string& path, const FigureSize& size);
void write_plot(const ScatterPlot& plot, const std::string& path, const FigureSize& size = {});

}  // namespace covey::plot
