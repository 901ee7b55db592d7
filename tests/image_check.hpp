#pragma once
// Reading PNG files back for the tests (with cairo, independently of how they were written):
// size, whether the picture holds anything, and how many pixels have a given colour.
#include <cairo.h>

#include <cmath>
#include <cstdint>
#include <stdexcept>
#include <string>

#include "test_util.hpp"

namespace covey::testing_util {

// Parses an XML file with Python's xml.etree (an independent parser): exit code 0 when it is
// well-formed; stdout holds the root tag's local name, then the text of its <title> and <desc>
// children, one per line.
inline CommandResult parse_xml_with_python(const std::string& path) {
  const std::string script =
      "import sys, xml.etree.ElementTree as E\n"
      "root = E.parse(sys.argv[1]).getroot()\n"
      "local = lambda t: t.split('}')[-1]\n"
      "print(local(root.tag))\n"
      "for name in ('title', 'desc'):\n"
      "    e = [c for c in root if local(c.tag) == name]\n"
      "    print(e[0].text if e else '')\n";
  return run_shell(std::string(COVEY_REFERENCE_PYTHON) + " -c \"" + script + "\" '" + path + "'");
}

struct PngStats {
  int width = 0, height = 0;
  double luminance_variance = 0;  // over all pixels, luminance in [0, 255]
  double non_white_fraction = 0;  // pixels darker than near-white
};

// Calls f(x, y, r, g, b) for every pixel (alpha composited over white).
template <class F>
void for_each_pixel(const std::string& path, F&& f, int* width = nullptr, int* height = nullptr) {
  cairo_surface_t* s = cairo_image_surface_create_from_png(path.c_str());
  if (cairo_surface_status(s) != CAIRO_STATUS_SUCCESS) {
    cairo_surface_destroy(s);
    throw std::runtime_error(path + ": cairo cannot read it as PNG");
  }
  cairo_surface_flush(s);
  const int w = cairo_image_surface_get_width(s), h = cairo_image_surface_get_height(s);
  const int stride = cairo_image_surface_get_stride(s);
  const unsigned char* data = cairo_image_surface_get_data(s);
  const bool has_alpha = cairo_image_surface_get_format(s) == CAIRO_FORMAT_ARGB32;
  for (int y = 0; y < h; ++y)
    for (int x = 0; x < w; ++x) {
      std::uint32_t px;
      __builtin_memcpy(&px, data + y * stride + 4 * x, 4);
      // Premultiplied ARGB: add white times (1 - alpha).
      const int a = has_alpha ? static_cast<int>(px >> 24) : 255;
      const int r = static_cast<int>((px >> 16) & 0xff) + (255 - a);
      const int g = static_cast<int>((px >> 8) & 0xff) + (255 - a);
      const int b = static_cast<int>(px & 0xff) + (255 - a);
      f(x, y, r, g, b);
    }
  if (width) *width = w;
  if (height) *height = h;
  cairo_surface_destroy(s);
}

inline PngStats png_stats(const std::string& path) {
  PngStats st;
  double sum = 0, sum2 = 0;
  std::size_t n = 0, dark = 0;
  for_each_pixel(
      path,
      [&](int, int, int r, int g, int b) {
        const double lum = 0.2126 * r + 0.7152 * g + 0.0722 * b;
        sum += lum;
        sum2 += lum * lum;
        ++n;
        if (lum < 245) ++dark;
      },
      &st.width, &st.height);
  if (n > 0) {
    const double mean = sum / n;
    st.luminance_variance = sum2 / n - mean * mean;
    st.non_white_fraction = static_cast<double>(dark) / n;
  }
  return st;
}

// Pixels for which pred(r, g, b) holds, inside the region given as fractions of the width and
// height (the whole image by default).
template <class Pred>
std::size_t count_pixels_if(const std::string& path, Pred&& pred, double x0 = 0, double y0 = 0,
                            double x1 = 1, double y1 = 1) {
  int w = 0, h = 0;
  for_each_pixel(
      path, [](int, int, int, int, int) {}, &w, &h);
  std::size_t count = 0;
  for_each_pixel(path, [&](int x, int y, int r, int g, int b) {
    if (x >= x0 * w && x < x1 * w && y >= y0 * h && y < y1 * h && pred(r, g, b)) ++count;
  });
  return count;
}

// Pixels within `tolerance` (per channel) of the colour 0xRRGGBB.
inline std::size_t count_pixels_near(const std::string& path, std::uint32_t rgb, int tolerance,
                                     double x0 = 0, double y0 = 0, double x1 = 1, double y1 = 1) {
  const int r0 = (rgb >> 16) & 0xff, g0 = (rgb >> 8) & 0xff, b0 = rgb & 0xff;
  return count_pixels_if(
      path,
      [&](int r, int g, int b) {
        return std::abs(r - r0) <= tolerance && std::abs(g - g0) <= tolerance &&
               std::abs(b - b0) <= tolerance;
      },
      x0, y0, x1, y1);
}

// Clearly blue pixels (any shade or transparency of the Okabe-Ito blue over white).
inline bool bluish(int r, int g, int b) {
  return b - r > 50 && b > g + 10;
}

}  // namespace covey::testing_util
