#include "covey/report/plot.hpp"

#include <cairo-svg.h>
#include <cairo.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <memory>
#include <string_view>

#include "covey/core/atomic_file.hpp"
#include "covey/core/error.hpp"

namespace covey::plot {

Colour series_colour(int index) {
  using namespace okabe_ito;
  static constexpr Colour kOrder[] = {kBlue,    kOrange,     kBluishGreen, kReddishPurple,
                                      kSkyBlue, kVermillion, kBlack,       kYellow};
  const int n = static_cast<int>(std::size(kOrder));
  return kOrder[((index % n) + n) % n];
}

std::string to_hex(Colour colour) {
  auto byte = [](double v) { return static_cast<int>(std::lround(std::clamp(v, 0.0, 1.0) * 255)); };
  char text[8];
  std::snprintf(text, sizeof text, "#%02x%02x%02x", byte(colour.r), byte(colour.g), byte(colour.b));
  return text;
}

std::string markup_escape(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (char ch : text) {
    switch (ch) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default:
        out += ch;
    }
  }
  return out;
}

Colour sequential_colour(double value) {
  // ColorBrewer "Blues", 9 classes, from light to dark; interpolated linearly between stops.
  static constexpr std::uint32_t kStops[] = {0xf7fbff, 0xdeebf7, 0xc6dbef, 0x9ecae1, 0x6baed6,
                                             0x4292c6, 0x2171b5, 0x08519c, 0x08306b};
  constexpr int kLast = static_cast<int>(std::size(kStops)) - 1;
  const double t = std::clamp(std::isfinite(value) ? value : 0.0, 0.0, 1.0) * kLast;
  const int i = std::min(static_cast<int>(t), kLast - 1);
  const double f = t - i;
  auto channel = [&](int shift) {
    const double a = ((kStops[i] >> shift) & 0xff) / 255.0;
    const double b = ((kStops[i + 1] >> shift) & 0xff) / 255.0;
    return a + f * (b - a);
  };
  return {channel(16), channel(8), channel(0)};
}

namespace {

// Colours of the plot chrome (text, axes, grid), shared by all plots.
constexpr Colour kInk{0.13, 0.13, 0.15};
constexpr Colour kMuted{0.40, 0.40, 0.44};
constexpr Colour kAxis{0.35, 0.35, 0.38};
constexpr Colour kGrid{0.90, 0.90, 0.92};
constexpr Colour kWhite{1, 1, 1};
constexpr Colour kMissing{0.86, 0.86, 0.88};
constexpr const char* kFontFamily = "DejaVu Sans";
constexpr double kTitleSize = 17, kLabelSize = 14, kTickSize = 12.5;
constexpr double kNoteSize = 13;   // legends, row names, counts
constexpr double kTitleBand = 40;  // height of the title strip at the top

// Drawing helpers over one cairo context; remembers every string drawn (for the SVG <desc>).
class Canvas {
 public:
  Canvas(cairo_t* cr, std::vector<std::string>* texts) : cr_(cr), texts_(texts) {}
  cairo_t* cr() const { return cr_; }

  void colour(Colour c, double alpha = 1.0) { cairo_set_source_rgba(cr_, c.r, c.g, c.b, alpha); }
  void font(double size, bool bold = false) {
    cairo_select_font_face(cr_, kFontFamily, CAIRO_FONT_SLANT_NORMAL,
                           bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr_, size);
    font_size_ = size;
  }
  double text_width(const std::string& s) const {
    cairo_text_extents_t extents;
    cairo_text_extents(cr_, s.c_str(), &extents);
    return extents.x_advance;
  }
  // Draws s with its anchor at (x, y): h_align 0 = left edge, 0.5 = centre, 1 = right edge;
  // v_align 0 = cap top, 0.5 = middle of the capitals, 1 = baseline. `angle` in radians turns
  // the text about the anchor; a halo keeps labels legible over data.
  void text(const std::string& s, double x, double y, double h_align, double v_align,
            double angle = 0.0, bool halo = false) {
    if (s.empty()) return;
    if (texts_) texts_->push_back(s);
    const double cap_height = 0.73 * font_size_;
    cairo_save(cr_);
    cairo_translate(cr_, x, y);
    cairo_rotate(cr_, angle);
    cairo_move_to(cr_, -h_align * text_width(s), cap_height * (1.0 - v_align));
    if (halo) {
      cairo_pattern_t* ink = cairo_get_source(cr_);
      cairo_pattern_reference(ink);
      cairo_text_path(cr_, s.c_str());
      cairo_set_source_rgba(cr_, 1, 1, 1, 0.9);
      cairo_set_line_width(cr_, 3.0);
      cairo_set_line_join(cr_, CAIRO_LINE_JOIN_ROUND);
      cairo_stroke_preserve(cr_);
      cairo_set_source(cr_, ink);
      cairo_pattern_destroy(ink);
      cairo_fill(cr_);
    } else {
      cairo_show_text(cr_, s.c_str());
    }
    cairo_restore(cr_);
  }
  void line(double x0, double y0, double x1, double y1, double width) {
    cairo_set_line_width(cr_, width);
    cairo_move_to(cr_, x0, y0);
    cairo_line_to(cr_, x1, y1);
    cairo_stroke(cr_);
  }
  void rect(double x, double y, double w, double h) {
    cairo_rectangle(cr_, x, y, w, h);
    cairo_fill(cr_);
  }
  void circle(double x, double y, double r) {
    cairo_new_sub_path(cr_);
    cairo_arc(cr_, x, y, r, 0, 2 * M_PI);
  }
  void dashed(bool on) {
    static const double kDash[] = {5.0, 4.0};
    cairo_set_dash(cr_, on ? kDash : nullptr, on ? 2 : 0, 0);
  }

 private:
  cairo_t* cr_;
  std::vector<std::string>* texts_;
  double font_size_ = 12;
};

// --- axes ------------------------------------------------------------------------------------

struct Axis {
  double lo = 0, hi = 1;  // data range shown
  Scale scale = Scale::kLinear;
  double px_lo = 0, px_hi = 1;  // pixel positions of lo and hi
  std::vector<double> ticks;
  std::vector<std::string> labels;

  Axis(double lo_, double hi_, Scale scale_ = Scale::kLinear, double px_lo_ = 0, double px_hi_ = 1)
      : lo(lo_), hi(hi_), scale(scale_), px_lo(px_lo_), px_hi(px_hi_) {}
  double map(double v) const {
    const auto t = [&](double x) { return scale == Scale::kLog10 ? std::log10(x) : x; };
    const double span = t(hi) - t(lo);
    return px_lo + (span > 0 ? (t(v) - t(lo)) / span : 0.5) * (px_hi - px_lo);
  }
};

// Unicode minus, for typographically correct negative tick labels.
std::string with_minus_sign(std::string text) {
  if (!text.empty() && text[0] == '-') text.replace(0, 1, "\u2212");
  return text;
}

std::string format_number(double v, int decimals) {
  char text[64];
  std::snprintf(text, sizeof text, "%.*f", std::max(0, decimals), v);
  std::string s = text;
  if (s.starts_with("-0") && s.find_first_not_of("0.", 1) == std::string::npos)
    s.erase(0, 1);  // no "-0"
  return with_minus_sign(s);
}

// Ticks at 1, 2 or 5 times a power of ten, about `target` of them within [lo, hi].
std::vector<double> linear_ticks(double lo, double hi, int target, double& step) {
  const double rough = (hi - lo) / std::max(1, target);
  const double magnitude = std::pow(10.0, std::floor(std::log10(rough)));
  const double residual = rough / magnitude;
  step = magnitude * (residual < 1.5 ? 1 : residual < 3 ? 2 : residual < 7 ? 5 : 10);
  std::vector<double> ticks;
  for (double k = std::ceil(lo / step - 1e-9); k * step <= hi + 1e-9 * step; k += 1)
    ticks.push_back(k * step);
  return ticks;
}

std::vector<std::string> linear_tick_labels(const std::vector<double>& ticks, double step) {
  double largest = 0;
  for (double t : ticks) largest = std::max(largest, std::abs(t));
  // Six-digit values get a k/M suffix so that labels stay short; smaller ones print in full.
  double divisor = 1;
  const char* suffix = "";
  if (largest >= 1e6) {
    divisor = 1e6;
    suffix = "M";
  } else if (largest >= 1e5) {
    divisor = 1e3;
    suffix = "k";
  }
  const int decimals = static_cast<int>(-std::floor(std::log10(step / divisor) + 1e-9));
  std::vector<std::string> labels;
  for (double t : ticks)
    labels.push_back(t == 0 ? "0" : format_number(t / divisor, decimals) + suffix);
  return labels;
}

std::string compact_count(double v) {
  if (v >= 1e6) return format_number(v / 1e6, v < 1e7 && std::fmod(v, 1e6) != 0 ? 1 : 0) + "M";
  if (v >= 1e4) return format_number(v / 1e3, 0) + "k";
  return format_number(v, v < 1 ? 2 : 0);
}

void set_ticks(Axis& axis, int target) {
  axis.ticks.clear();
  axis.labels.clear();
  if (axis.scale == Scale::kLog10) {
    const int first = static_cast<int>(std::floor(std::log10(axis.lo) + 1e-9));
    const int last = static_cast<int>(std::ceil(std::log10(axis.hi) - 1e-9));
    const bool fine = last - first <= 3;  // few decades: also 2x and 5x
    for (int e = first; e <= last; ++e)
      for (double m : {1.0, 2.0, 5.0}) {
        if (m != 1.0 && !fine) continue;
        const double v = m * std::pow(10.0, e);
        if (v < axis.lo * (1 - 1e-9) || v > axis.hi * (1 + 1e-9)) continue;
        axis.ticks.push_back(v);
        axis.labels.push_back(compact_count(v));
      }
    return;
  }
  double step = 1;
  axis.ticks = linear_ticks(axis.lo, axis.hi, target, step);
  axis.labels = linear_tick_labels(axis.ticks, step);
}

// A data range [lo, hi] with a margin on each side (never empty).
void pad_range(double& lo, double& hi, double fraction, Scale scale) {
  if (scale == Scale::kLog10) {
    if (!(hi > lo)) {
      lo /= 2;
      hi *= 2;
    }
    const double factor = std::pow(hi / lo, fraction);
    lo /= factor;
    hi *= factor;
    return;
  }
  if (!(hi > lo)) {
    const double half = lo == 0 ? 1.0 : std::abs(lo) * 0.05;
    lo -= half;
    hi += half;
  }
  const double pad = (hi - lo) * fraction;
  lo -= pad;
  hi += pad;
}

double widest(Canvas& c, const std::vector<std::string>& labels) {
  double w = 0;
  for (const auto& s : labels) w = std::max(w, c.text_width(s));
  return w;
}

void draw_title(Canvas& c, const std::string& title, double x) {
  c.font(kTitleSize, true);
  c.colour(kInk);
  c.text(title, x, 14, 0, 0);
}

// Horizontal axis along y = `baseline` from axis.px_lo to px_hi, with grid lines up to `top`.
void draw_x_axis(Canvas& c, const Axis& axis, double baseline, double top, const std::string& label,
                 bool grid = true) {
  c.font(kTickSize);
  for (std::size_t i = 0; i < axis.ticks.size(); ++i) {
    const double x = std::round(axis.map(axis.ticks[i])) + 0.5;
    if (grid) {
      c.colour(kGrid);
      c.line(x, top, x, baseline, 1);
    }
    c.colour(kAxis);
    c.line(x, baseline, x, baseline + 4, 1);
    c.colour(kMuted);
    c.text(axis.labels[i], x, baseline + 8, 0.5, 0);
  }
  c.colour(kAxis);
  c.line(axis.px_lo, baseline + 0.5, axis.px_hi, baseline + 0.5, 1);
  c.font(kLabelSize);
  c.colour(kInk);
  c.text(label, (axis.px_lo + axis.px_hi) / 2, baseline + 33, 0.5, 0);
}

// Vertical axis along x = `left`, grid lines to `right`; the label sits rotated at `label_x`.
void draw_y_axis(Canvas& c, const Axis& axis, double left, double right, const std::string& label,
                 double label_x) {
  c.font(kTickSize);
  for (std::size_t i = 0; i < axis.ticks.size(); ++i) {
    const double y = std::round(axis.map(axis.ticks[i])) + 0.5;
    c.colour(kGrid);
    c.line(left, y, right, y, 1);
    c.colour(kAxis);
    c.line(left - 4, y, left, y, 1);
    c.colour(kMuted);
    c.text(axis.labels[i], left - 7, y, 1, 0.5);
  }
  c.colour(kAxis);
  c.line(left - 0.5, axis.px_lo, left - 0.5, axis.px_hi, 1);
  c.font(kLabelSize);
  c.colour(kInk);
  c.text(label, label_x, (axis.px_lo + axis.px_hi) / 2, 0.5, 0, -M_PI / 2);
}

void draw_message(Canvas& c, const std::string& message, double x, double y) {
  c.font(kLabelSize);
  c.colour(kMuted);
  c.text(message, x, y, 0.5, 0.5);
}

// Deterministic jitter in [-0.5, 0.5) from an index (splitmix64), so output is reproducible.
double jitter(std::uint64_t key) {
  std::uint64_t z = key + 0x9e3779b97f4a7c15ULL;
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  z ^= z >> 31;
  return static_cast<double>(z >> 11) / 9007199254740992.0 - 0.5;
}

// --- rendering to files ----------------------------------------------------------------------

enum class Format { kPng, kSvg };

Format format_of(const std::string& path) {
  std::string ext = path.substr(
      path.find_last_of('.') == std::string::npos ? path.size() : path.find_last_of('.'));
  std::transform(ext.begin(), ext.end(), ext.begin(),
                 [](unsigned char ch) { return static_cast<char>(std::tolower(ch)); });
  if (ext == ".png") return Format::kPng;
  if (ext == ".svg") return Format::kSvg;
  throw InputError(path + ": unknown image type '" + ext + "' (use .png or .svg)");
}

cairo_status_t append_bytes(void* closure, const unsigned char* data, unsigned int length) {
  static_cast<std::string*>(closure)->append(reinterpret_cast<const char*>(data), length);
  return CAIRO_STATUS_SUCCESS;
}

// Puts <title> and <desc> (every string drawn, once each) right after the opening <svg> tag.
void add_svg_text(std::string& svg, const std::string& title, std::vector<std::string> texts) {
  const auto open = svg.find("<svg");
  const auto end = open == std::string::npos ? open : svg.find('>', open);
  if (end == std::string::npos) throw Error("cairo produced an SVG without an <svg> element");
  std::vector<std::string> unique;
  for (auto& t : texts)
    if (std::find(unique.begin(), unique.end(), t) == unique.end()) unique.push_back(std::move(t));
  std::string desc;
  for (const auto& t : unique) desc += (desc.empty() ? "" : "; ") + t;
  svg.insert(end + 1, "\n<title>" + markup_escape(title) + "</title>\n<desc>" +
                          markup_escape(desc) + "</desc>");
}

struct SurfaceDeleter {
  void operator()(cairo_surface_t* s) const { cairo_surface_destroy(s); }
};
struct ContextDeleter {
  void operator()(cairo_t* cr) const { cairo_destroy(cr); }
};
using SurfacePtr = std::unique_ptr<cairo_surface_t, SurfaceDeleter>;
using ContextPtr = std::unique_ptr<cairo_t, ContextDeleter>;

void check(cairo_status_t status, const std::string& path) {
  if (status != CAIRO_STATUS_SUCCESS)
    throw Error(path + ": cannot draw the plot: " + cairo_status_to_string(status));
}

void prepare_context(cairo_t* cr) {
  cairo_font_options_t* options = cairo_font_options_create();
  // Unhinted metrics: text is laid out the same in the PNG and the SVG.
  cairo_font_options_set_hint_metrics(options, CAIRO_HINT_METRICS_OFF);
  cairo_font_options_set_hint_style(options, CAIRO_HINT_STYLE_NONE);
  cairo_font_options_set_antialias(options, CAIRO_ANTIALIAS_GRAY);
  cairo_set_font_options(cr, options);
  cairo_font_options_destroy(options);
  cairo_set_line_cap(cr, CAIRO_LINE_CAP_BUTT);
}

template <class Draw>
void render(const std::string& path, const FigureSize& size, const std::string& title,
            Draw&& draw) {
  if (size.width < 16 || size.height < 16 || size.width > 20000 || size.height > 20000 ||
      !(size.png_scale > 0 && size.png_scale <= 8))
    throw InputError(path + ": figure size " + std::to_string(size.width) + "x" +
                     std::to_string(size.height) + " is out of range");
  const Format format = format_of(path);
  std::string bytes;
  std::vector<std::string> texts;
  SurfacePtr surface(
      format == Format::kPng
          ? cairo_image_surface_create(CAIRO_FORMAT_ARGB32,
                                       static_cast<int>(std::lround(size.width * size.png_scale)),
                                       static_cast<int>(std::lround(size.height * size.png_scale)))
          : cairo_svg_surface_create_for_stream(append_bytes, &bytes, size.width, size.height));
  check(cairo_surface_status(surface.get()), path);
  if (format == Format::kSvg) cairo_svg_surface_set_document_unit(surface.get(), CAIRO_SVG_UNIT_PX);
  {
    ContextPtr cr(cairo_create(surface.get()));
    if (format == Format::kPng) cairo_scale(cr.get(), size.png_scale, size.png_scale);
    prepare_context(cr.get());
    cairo_set_source_rgb(cr.get(), 1, 1, 1);
    cairo_paint(cr.get());
    Canvas canvas(cr.get(), &texts);
    draw(canvas, static_cast<double>(size.width), static_cast<double>(size.height));
    check(cairo_status(cr.get()), path);
  }
  if (format == Format::kPng) {
    check(cairo_surface_write_to_png_stream(surface.get(), append_bytes, &bytes), path);
  } else {
    cairo_surface_finish(surface.get());
    check(cairo_surface_status(surface.get()), path);
    add_svg_text(bytes, title, std::move(texts));
  }
  surface.reset();
  write_text_file_atomically(path, bytes);
}

// --- line plot -------------------------------------------------------------------------------

void require_same_length(const Series& s, const std::string& title) {
  if (s.x.size() != s.y.size())
    throw InputError("plot '" + title + "': series '" + s.name + "' has " +
                     std::to_string(s.x.size()) + " x values but " + std::to_string(s.y.size()) +
                     " y values");
}

// Draws one series clipped to the plot; when it has many more points than pixel columns, each
// column shows the range of its points (so spikes stay visible) instead of thousands of segments.
void draw_series(Canvas& c, const Series& s, const Axis& x, const Axis& y) {
  cairo_t* cr = c.cr();
  const double width_px = std::abs(x.px_hi - x.px_lo);
  if (static_cast<double>(s.x.size()) > 3 * width_px) {
    const int columns = static_cast<int>(width_px * 2) + 1;
    std::vector<double> lo(columns, INFINITY), hi(columns, -INFINITY);
    for (std::size_t i = 0; i < s.x.size(); ++i) {
      if (!std::isfinite(s.x[i]) || !std::isfinite(s.y[i])) continue;
      const int col = std::clamp(static_cast<int>((x.map(s.x[i]) - x.px_lo) * 2), 0, columns - 1);
      lo[col] = std::min(lo[col], s.y[i]);
      hi[col] = std::max(hi[col], s.y[i]);
    }
    bool started = false, at_high = false;
    for (int col = 0; col < columns; ++col) {
      if (!(lo[col] <= hi[col])) continue;
      const double px = x.px_lo + col / 2.0;
      const double first = at_high ? hi[col] : lo[col], second = at_high ? lo[col] : hi[col];
      if (started)
        cairo_line_to(cr, px, y.map(first));
      else
        cairo_move_to(cr, px, y.map(first));
      cairo_line_to(cr, px, y.map(second));
      at_high = !at_high;
      started = true;
    }
  } else {
    bool pen_down = false;
    for (std::size_t i = 0; i < s.x.size(); ++i) {
      if (!std::isfinite(s.x[i]) || !std::isfinite(s.y[i])) {
        pen_down = false;
        continue;
      }
      if (pen_down)
        cairo_line_to(cr, x.map(s.x[i]), y.map(s.y[i]));
      else
        cairo_move_to(cr, x.map(s.x[i]), y.map(s.y[i]));
      pen_down = true;
    }
  }
  cairo_stroke(cr);
}

void draw_line_plot(Canvas& c, const LinePlot& plot, double width, double height) {
  double x_lo = INFINITY, x_hi = -INFINITY, y_lo = INFINITY, y_hi = -INFINITY;
  for (const auto& s : plot.series)
    for (std::size_t i = 0; i < s.x.size(); ++i)
      if (std::isfinite(s.x[i]) && std::isfinite(s.y[i])) {
        x_lo = std::min(x_lo, s.x[i]);
        x_hi = std::max(x_hi, s.x[i]);
        y_lo = std::min(y_lo, s.y[i]);
        y_hi = std::max(y_hi, s.y[i]);
      }
  const bool empty = !(x_lo <= x_hi);
  if (empty) x_lo = 0, x_hi = 1, y_lo = 0, y_hi = 1;
  if (!(x_hi > x_lo)) pad_range(x_lo, x_hi, 0, Scale::kLinear);
  if (x_lo > 0 && x_lo < 0.05 * (x_hi - x_lo)) x_lo = 0;  // steps from 1 or 50: axis from 0
  pad_range(y_lo, y_hi, 0.04, Scale::kLinear);

  Axis y{y_lo, y_hi, Scale::kLinear};
  set_ticks(y, std::max(3, static_cast<int>((height - 120) / 55)));
  y.lo = std::min(y.lo, y.ticks.empty() ? y.lo : y.ticks.front());
  c.font(kTickSize);
  const double left = 16 + (plot.y_label.empty() ? 0 : 22) + widest(c, y.labels) + 10;

  // Legend to the right of the plot, one entry per named series.
  std::vector<int> named;
  for (int i = 0; i < static_cast<int>(plot.series.size()); ++i)
    if (!plot.series[i].name.empty()) named.push_back(i);
  c.font(kNoteSize);
  double legend_width = 0;
  for (int i : named) legend_width = std::max(legend_width, c.text_width(plot.series[i].name));
  if (!named.empty()) legend_width += 48;
  const double right = width - 20 - legend_width;
  const double top = plot.title.empty() ? 16 : kTitleBand + 8;
  const double bottom = height - 16 - (plot.x_label.empty() ? 0 : 27) - 24;

  Axis x{x_lo, x_hi, Scale::kLinear, left, right};
  set_ticks(x, std::max(3, static_cast<int>((right - left) / 110)));
  y.px_lo = bottom;
  y.px_hi = top;

  draw_title(c, plot.title, left);
  draw_y_axis(c, y, left, right, plot.y_label, 18);
  draw_x_axis(c, x, bottom, top, plot.x_label);
  if (empty) {
    draw_message(c, "no data", (left + right) / 2, (top + bottom) / 2);
    return;
  }

  cairo_t* cr = c.cr();
  cairo_save(cr);
  cairo_rectangle(cr, left, top, right - left, bottom - top);
  cairo_clip(cr);
  cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
  cairo_set_line_width(cr, plot.series.size() > 4 ? 1.0 : 1.3);
  for (int i = 0; i < static_cast<int>(plot.series.size()); ++i) {
    c.colour(series_colour(i), 0.85);
    c.dashed(i >= 8);
    draw_series(c, plot.series[i], x, y);
  }
  c.dashed(false);
  cairo_restore(cr);

  // Legend entries, top-aligned with the plot; entries that do not fit are summarised.
  const double row_height = 21;
  const int fits = std::max(1, static_cast<int>((bottom - top) / row_height));
  c.font(kNoteSize);
  for (int k = 0; k < static_cast<int>(named.size()); ++k) {
    const double ly = top + 8 + k * row_height;
    if (k == fits - 1 && static_cast<int>(named.size()) > fits) {
      c.colour(kMuted);
      c.text("+" + std::to_string(named.size() - k) + " more", right + 20, ly, 0, 0.5);
      break;
    }
    const int i = named[k];
    c.colour(series_colour(i));
    c.dashed(i >= 8);
    c.line(right + 20, ly, right + 40, ly, 2.5);
    c.dashed(false);
    c.colour(kInk);
    c.text(plot.series[i].name, right + 46, ly, 0, 0.5);
  }
}

// --- strip plot ------------------------------------------------------------------------------

bool is_bad(const StripPlot& plot, double v) {
  if (std::isnan(plot.threshold)) return false;
  return plot.above_is_bad ? v > plot.threshold : v < plot.threshold;
}

void draw_strip_plot(Canvas& c, const StripPlot& plot, double width, double height) {
  const bool log = plot.x_scale == Scale::kLog10;
  double lo = INFINITY, hi = -INFINITY;
  bool any_infinite = false;
  for (const auto& row : plot.rows)
    for (double v : row.values) {
      if (std::isinf(v) && v > 0) any_infinite = true;
      if (!std::isfinite(v) || (log && v <= 0)) continue;
      lo = std::min(lo, v);
      hi = std::max(hi, v);
    }
  if (!std::isnan(plot.threshold)) {
    lo = std::min(lo, plot.threshold);
    hi = std::max(hi, plot.threshold);
  }
  if (!(lo <= hi)) lo = hi = log ? 1.0 : 0.0;
  pad_range(lo, hi, log ? 0.04 : 0.06, plot.x_scale);

  // Right-hand annotations: how many values fail, and how many are undefined.
  struct Note {
    std::string first, second;
    bool failing = false;
  };
  std::vector<Note> notes;
  for (const auto& row : plot.rows) {
    std::size_t bad = 0, undefined = 0;
    for (double v : row.values) {
      if (std::isnan(v))
        ++undefined;
      else if (is_bad(plot, v))
        ++bad;
    }
    const std::size_t defined = row.values.size() - undefined;
    Note note;
    if (std::isnan(plot.threshold))
      note.first = std::to_string(defined) + " values";
    else if (bad > 0)
      note.first = std::to_string(bad) + " of " + std::to_string(defined) + " fail";
    else
      note.first = defined == 0 ? "no values" : "all " + std::to_string(defined) + " pass";
    note.failing = bad > 0;
    if (undefined > 0) note.second = std::to_string(undefined) + " undefined";
    notes.push_back(note);
  }
  c.font(kNoteSize, true);
  double note_width = 0, name_width = 0;
  for (const auto& n : notes) note_width = std::max(note_width, c.text_width(n.first));
  c.font(kNoteSize);
  for (const auto& n : notes) note_width = std::max(note_width, c.text_width(n.second));
  for (const auto& row : plot.rows) name_width = std::max(name_width, c.text_width(row.name));

  const double left = 16 + name_width + 14;
  const double right = width - 18 - note_width - 16;
  const double top = (plot.title.empty() ? 16 : kTitleBand) + 22;  // room for threshold label
  const double bottom = height - 16 - (plot.x_label.empty() ? 0 : 27) - 24;
  Axis x{lo, hi, plot.x_scale, left, right};
  set_ticks(x, std::max(3, static_cast<int>((right - left) / 100)));

  draw_title(c, plot.title, 16);
  draw_x_axis(c, x, bottom, top, plot.x_label);
  if (plot.rows.empty()) {
    draw_message(c, "no values", (left + right) / 2, (top + bottom) / 2);
    return;
  }

  // Shade the failing side, then the threshold line and its label.
  if (!std::isnan(plot.threshold)) {
    const double tx = x.map(plot.threshold);
    c.colour(okabe_ito::kVermillion, 0.07);
    if (plot.above_is_bad)
      c.rect(tx, top, right - tx, bottom - top);
    else
      c.rect(left, top, tx - left, bottom - top);
    c.colour(kInk, 0.8);
    c.dashed(true);
    c.line(tx, top - 4, tx, bottom, 1.3);
    c.dashed(false);
    c.font(kTickSize, true);
    c.text(plot.threshold_label, tx, top - 8, plot.above_is_bad ? 0.0 : 1.0, 1);
  }

  const double row_height = (bottom - top) / static_cast<double>(plot.rows.size());
  std::size_t total = 0;
  for (const auto& row : plot.rows) total += row.values.size();
  const double radius = total > 3000 ? 1.8 : total > 600 ? 2.3 : 3.0;
  const double alpha = total > 3000 ? 0.25 : total > 600 ? 0.35 : 0.5;
  cairo_t* cr = c.cr();
  auto x_of = [&](double v) {
    if (std::isinf(v)) return x.map(hi) - 4;  // +infinity sits at the right edge
    if (log && v <= 0) return x.map(lo) + 4;
    return x.map(v);
  };
  for (std::size_t r = 0; r < plot.rows.size(); ++r) {
    const auto& row = plot.rows[r];
    const double mid = top + (r + 0.5) * row_height;
    if (r > 0) {
      c.colour(kGrid);
      c.line(left, top + r * row_height, right, top + r * row_height, 1);
    }
    c.font(kNoteSize, true);
    c.colour(kInk);
    c.text(row.name, left - 12, mid, 1, 0.5);
    // Dots spread over most of the row, less when there are few (one dot sits on the centre).
    const double spread =
        0.72 * row_height * std::min(1.0, static_cast<double>(row.values.size() - 1) / 20.0);
    // Passing dots first, failing ones on top and larger.
    for (int pass = 0; pass < 2; ++pass) {
      const bool failing_pass = pass == 1;
      if (failing_pass)
        c.colour(okabe_ito::kVermillion, 0.9);
      else
        c.colour(okabe_ito::kBlue, alpha);
      for (std::size_t i = 0; i < row.values.size(); ++i) {
        const double v = row.values[i];
        if (std::isnan(v) || (v < 0 && std::isinf(v)) || is_bad(plot, v) != failing_pass) continue;
        const double dy = jitter((static_cast<std::uint64_t>(r) << 40) ^ i) * spread;
        c.circle(x_of(v), mid + dy, failing_pass ? radius + 1.2 : radius);
        cairo_fill(cr);
      }
    }
    const Note& note = notes[r];
    c.font(kNoteSize, true);
    c.colour(note.failing ? okabe_ito::kVermillion : kMuted);
    const double nx = right + 16;
    c.text(note.first, nx, note.second.empty() ? mid : mid - 8, 0, 0.5);
    if (!note.second.empty()) {
      c.font(kNoteSize);
      c.colour(kMuted);
      c.text(note.second, nx, mid + 9, 0, 0.5);
    }
  }
  if (any_infinite) {
    c.font(kTickSize);
    c.colour(kMuted);
    c.text("\u221e", x.map(hi) - 4, bottom + 8, 0.5, 0);
  }
}

// --- heat map --------------------------------------------------------------------------------

struct HeatLayout {
  double left = 0, top = 0, cell = 0;
  double label_size = 12;
  bool show_labels = true, vertical_columns = false;
  double column_label_extent = 0;  // height taken by the column labels below the grid
};

double cell_for(std::size_t count) {
  return std::clamp(560.0 / static_cast<double>(std::max<std::size_t>(count, 1)), 6.0, 52.0);
}

constexpr double kColourBarSpace = 110;  // to the right of the grid

HeatLayout layout_heat_map(Canvas& c, const HeatMap& map, double width, double height) {
  HeatLayout l;
  const std::size_t rows = map.row_names.size(), cols = map.column_names.size();
  const double guess = std::min(cell_for(rows), cell_for(cols));
  l.label_size = std::clamp(guess * 0.8, 8.0, 12.0);
  l.show_labels = guess >= 8;
  c.font(l.label_size);
  const double row_label_width = l.show_labels ? widest(c, map.row_names) : 0;
  const double col_label_width = l.show_labels ? widest(c, map.column_names) : 0;
  l.left = 16 + (map.row_title.empty() ? 0 : 24) + row_label_width + 8;
  l.top = map.title.empty() ? 16 : kTitleBand + 6;
  const double avail_w = width - l.left - kColourBarSpace - 12;
  // The column labels turn vertical when they would not fit across a cell.
  auto extent_for = [&](double cell, bool& vertical) {
    vertical = col_label_width > cell - 4;
    return l.show_labels ? (vertical ? col_label_width : l.label_size) + 10 : 4;
  };
  bool vertical = false;
  const double below_guess = extent_for(guess, vertical) + (map.column_title.empty() ? 0 : 28);
  const double avail_h = height - l.top - below_guess - 12;
  l.cell = std::max(1.0, std::min({avail_w / std::max<std::size_t>(cols, 1),
                                   avail_h / std::max<std::size_t>(rows, 1), 52.0}));
  l.column_label_extent = extent_for(l.cell, l.vertical_columns);
  return l;
}

void draw_colour_bar(Canvas& c, double x, double top, double height, const std::string& title) {
  const int steps = 64;
  for (int i = 0; i < steps; ++i) {
    const double v0 = static_cast<double>(i) / steps;
    c.colour(sequential_colour(v0 + 0.5 / steps));
    // Overlap by a pixel so no seams show between the bands.
    c.rect(x, top + height * (1 - v0) - height / steps - 0.5, 16, height / steps + 1);
  }
  c.colour(kAxis);
  cairo_set_line_width(c.cr(), 1);
  cairo_rectangle(c.cr(), x + 0.5, top + 0.5, 15, height - 1);
  cairo_stroke(c.cr());
  c.font(kTickSize);
  for (double v : {0.0, 0.25, 0.5, 0.75, 1.0}) {
    const double y = top + height * (1 - v);
    c.colour(kAxis);
    c.line(x + 16, y, x + 20, y, 1);
    c.colour(kMuted);
    c.text(format_number(v, v == 0.25 || v == 0.75 ? 2 : 1), x + 23, y, 0, 0.5);
  }
  c.font(kLabelSize);
  c.colour(kInk);
  c.text(title, x + 70, top + height / 2, 0.5, 0, -M_PI / 2);
}

void require_matrix_shape(const HeatMap& map) {
  if (map.values.size() != map.row_names.size())
    throw InputError("heat map '" + map.title + "': " + std::to_string(map.values.size()) +
                     " rows of values for " + std::to_string(map.row_names.size()) + " row names");
  for (const auto& row : map.values)
    if (row.size() != map.column_names.size())
      throw InputError("heat map '" + map.title + "': a row has " + std::to_string(row.size()) +
                       " values for " + std::to_string(map.column_names.size()) + " columns");
}

void draw_heat_map(Canvas& c, const HeatMap& map, double width, double height) {
  const HeatLayout l = layout_heat_map(c, map, width, height);
  const std::size_t rows = map.row_names.size(), cols = map.column_names.size();
  draw_title(c, map.title, 16);
  if (rows == 0 || cols == 0) {
    draw_message(c, "no variables", width / 2, height / 2);
    return;
  }
  const double grid_w = l.cell * cols, grid_h = l.cell * rows;
  const double gap = l.cell >= 10 ? 1.0 : 0.0;  // white hairlines between cells
  c.font(std::clamp(l.cell * 0.3, 8.0, 11.0));
  const bool print_values = map.show_values && l.cell >= 30;
  for (std::size_t r = 0; r < rows; ++r)
    for (std::size_t col = 0; col < cols; ++col) {
      const double v = map.values[r][col];
      const double x = l.left + col * l.cell, y = l.top + r * l.cell;
      c.colour(std::isnan(v) ? kMissing : sequential_colour(v));
      c.rect(x + gap / 2, y + gap / 2, l.cell - gap, l.cell - gap);
      if (print_values && std::isfinite(v) && v >= 0.01) {
        c.colour(v > 0.55 ? kWhite : kInk);
        c.text(format_number(v, 2), x + l.cell / 2, y + l.cell / 2, 0.5, 0.5);
      }
    }
  if (l.show_labels) {
    c.font(l.label_size);
    c.colour(kInk);
    for (std::size_t r = 0; r < rows; ++r)
      c.text(map.row_names[r], l.left - 8, l.top + (r + 0.5) * l.cell, 1, 0.5);
    for (std::size_t col = 0; col < cols; ++col) {
      const double x = l.left + (col + 0.5) * l.cell;
      if (l.vertical_columns)
        c.text(map.column_names[col], x, l.top + grid_h + 8, 1, 0.5, -M_PI / 2);
      else
        c.text(map.column_names[col], x, l.top + grid_h + 8, 0.5, 0);
    }
  }
  c.font(kLabelSize, true);
  c.colour(kInk);
  c.text(map.column_title, l.left + grid_w / 2, l.top + grid_h + l.column_label_extent + 8, 0.5, 0);
  c.text(map.row_title, 18, l.top + grid_h / 2, 0.5, 0, -M_PI / 2);
  const double bar_height = std::min(grid_h, 260.0);
  draw_colour_bar(c, l.left + grid_w + 28, l.top + (grid_h - bar_height) / 2, bar_height,
                  map.colour_title);
}

// --- scatter plot ----------------------------------------------------------------------------

void draw_scatter_plot(Canvas& c, const ScatterPlot& plot, double width, double height) {
  if (!(plot.max > plot.min))
    throw InputError("scatter plot '" + plot.title + "': empty axis range");
  Axis probe{plot.min, plot.max};
  set_ticks(probe, 5);
  c.font(kTickSize);
  const double tick_width = widest(c, probe.labels);
  const double top = plot.title.empty() ? 16 : kTitleBand + 8;
  const double left_margin = 16 + (plot.y_label.empty() ? 0 : 22) + tick_width + 10;
  const double bottom_margin = 16 + (plot.x_label.empty() ? 0 : 27) + 24;
  const double side =
      std::max(40.0, std::min(width - left_margin - 24, height - top - bottom_margin));
  const double left = left_margin + std::max(0.0, (width - left_margin - 24 - side) / 2);
  const double bottom = top + side;
  Axis x{plot.min, plot.max, Scale::kLinear, left, left + side};
  Axis y{plot.min, plot.max, Scale::kLinear, bottom, top};
  x.ticks = y.ticks = probe.ticks;
  x.labels = y.labels = probe.labels;

  draw_title(c, plot.title, 16);
  draw_y_axis(c, y, left, left + side, plot.y_label, left - tick_width - 28);
  draw_x_axis(c, x, bottom, top, plot.x_label);
  c.colour(kAxis, 0.8);
  c.dashed(true);
  c.line(x.map(plot.min), y.map(plot.min), x.map(plot.max), y.map(plot.max), 1.2);
  c.dashed(false);
  // A key for the diagonal in the upper-left corner, where probabilities rarely fall.
  c.colour(kAxis, 0.8);
  c.dashed(true);
  c.line(left + 12, top + 14, left + 34, top + 14, 1.2);
  c.dashed(false);
  c.font(kTickSize);
  c.colour(kMuted);
  c.text("equal (y = x)", left + 40, top + 14, 0, 0.5);
  if (plot.points.empty()) {
    draw_message(c, "no pairs to compare", left + side / 2, top + side / 2);
    return;
  }

  cairo_t* cr = c.cr();
  cairo_save(cr);
  cairo_rectangle(cr, left - 6, top - 6, side + 12, side + 12);
  cairo_clip(cr);
  c.colour(okabe_ito::kBlue, 0.45);
  for (const auto& p : plot.points) {
    if (!std::isfinite(p.x) || !std::isfinite(p.y)) continue;
    const double px = x.map(p.x), py = y.map(p.y);
    if (std::isfinite(p.x_error) && p.x_error > 0) {
      c.line(x.map(p.x - p.x_error), py, x.map(p.x + p.x_error), py, 1);
      c.line(x.map(p.x - p.x_error), py - 2.5, x.map(p.x - p.x_error), py + 2.5, 1);
      c.line(x.map(p.x + p.x_error), py - 2.5, x.map(p.x + p.x_error), py + 2.5, 1);
    }
    if (std::isfinite(p.y_error) && p.y_error > 0) {
      c.line(px, y.map(p.y - p.y_error), px, y.map(p.y + p.y_error), 1);
      c.line(px - 2.5, y.map(p.y - p.y_error), px + 2.5, y.map(p.y - p.y_error), 1);
      c.line(px - 2.5, y.map(p.y + p.y_error), px + 2.5, y.map(p.y + p.y_error), 1);
    }
  }
  for (const auto& p : plot.points) {
    if (!std::isfinite(p.x) || !std::isfinite(p.y)) continue;
    c.circle(x.map(p.x), y.map(p.y), 3.6);
    c.colour(okabe_ito::kBlue, 0.8);
    cairo_fill_preserve(cr);
    c.colour(kWhite);
    cairo_set_line_width(cr, 0.8);
    cairo_stroke(cr);
  }
  cairo_restore(cr);

  // Name the points farthest from the diagonal: the disagreements worth a look.
  std::vector<const ScatterPoint*> order;
  for (const auto& p : plot.points)
    if (std::isfinite(p.x) && std::isfinite(p.y) && !p.label.empty() &&
        std::abs(p.y - p.x) >= plot.label_min_distance)
      order.push_back(&p);
  std::sort(order.begin(), order.end(), [](const ScatterPoint* a, const ScatterPoint* b) {
    return std::abs(a->y - a->x) > std::abs(b->y - b->x);
  });
  if (static_cast<int>(order.size()) > plot.labelled_points) order.resize(plot.labelled_points);
  c.font(kNoteSize);
  c.colour(kInk);
  // Above the diagonal a label prefers the up-left of its dot, below it the down-right (away
  // from the other dots); it tries the other corners when it would overlap a placed label or
  // leave the figure, and is left out when no corner is free.
  struct Box {
    double x0, y0, x1, y1;
  };
  std::vector<Box> placed;
  const double text_height = 0.73 * kNoteSize;
  for (const ScatterPoint* p : order) {
    const bool above = p->y > p->x;
    const double px = x.map(p->x), py = y.map(p->y), w = c.text_width(p->label);
    const std::array<std::pair<bool, bool>, 4> corners = {
        {{above, above}, {!above, above}, {above, !above}, {!above, !above}}};
    for (const auto& [left_side, upper_side] : corners) {
      const double ax = px + (left_side ? -7 : 7), ay = py + (upper_side ? -7 : 7);
      const Box box{left_side ? ax - w : ax, upper_side ? ay - text_height : ay,
                    left_side ? ax : ax + w, upper_side ? ay : ay + text_height};
      if (box.x0 < 4 || box.x1 > width - 4 || box.y0 < top || box.y1 > bottom) continue;
      const bool overlaps = std::any_of(placed.begin(), placed.end(), [&](const Box& b) {
        return box.x0 < b.x1 + 3 && b.x0 < box.x1 + 3 && box.y0 < b.y1 + 3 && b.y0 < box.y1 + 3;
      });
      if (overlaps) continue;
      placed.push_back(box);
      c.text(p->label, ax, ay, left_side ? 1.0 : 0.0, upper_side ? 1.0 : 0.0, 0.0, true);
      break;
    }
  }
}

}  // namespace

FigureSize preferred_size(const HeatMap& map) {
  SurfacePtr scratch(cairo_image_surface_create(CAIRO_FORMAT_ARGB32, 1, 1));
  ContextPtr cr(cairo_create(scratch.get()));
  prepare_context(cr.get());
  Canvas c(cr.get(), nullptr);
  const std::size_t rows = map.row_names.size(), cols = map.column_names.size();
  const double cell = std::min(cell_for(rows), cell_for(cols));
  // Lay out on a generous canvas, then shrink it to the grid and its labels.
  const HeatLayout l = layout_heat_map(c, map, 1e5, 1e5);
  const double label_size = std::clamp(cell * 0.8, 8.0, 12.0);
  c.font(label_size);
  const double col_label_width = widest(c, map.column_names);
  const bool vertical = col_label_width > cell - 4;
  const double below =
      (vertical ? col_label_width : label_size) + 10 + (map.column_title.empty() ? 0 : 28) + 16;
  FigureSize size;
  size.width = static_cast<int>(std::ceil(l.left + cell * cols + kColourBarSpace + 16));
  size.height = static_cast<int>(std::ceil(l.top + cell * rows + below));
  size.width = std::max(size.width, 420);
  size.height = std::max(size.height, 320);
  return size;
}

void write_plot(const LinePlot& plot, const std::string& path, const FigureSize& size) {
  for (const auto& s : plot.series) require_same_length(s, plot.title);
  render(path, size, plot.title,
         [&](Canvas& c, double w, double h) { draw_line_plot(c, plot, w, h); });
}

void write_plot(const StripPlot& plot, const std::string& path, const FigureSize& size) {
  render(path, size, plot.title,
         [&](Canvas& c, double w, double h) { draw_strip_plot(c, plot, w, h); });
}

void write_plot(const HeatMap& plot, const std::string& path, const FigureSize& size) {
  require_matrix_shape(plot);
  render(path, size, plot.title,
         [&](Canvas& c, double w, double h) { draw_heat_map(c, plot, w, h); });
}

void write_plot(const ScatterPlot& plot, const std::string& path, const FigureSize& size) {
  render(path, size, plot.title,
         [&](Canvas& c, double w, double h) { draw_scatter_plot(c, plot, w, h); });
}

}  // namespace covey::plot
