// Map drawing.
#include "orderband/map_image.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>

#include "orderband/error.hpp"
#include "orderband/units.hpp"

namespace orderband {

double pixels_per_step(const ScanGrid& grid, double longest_side_px) {
  return std::max(1.0, std::min(8.0, longest_side_px / std::max(grid.rows, grid.cols)));
}

MapCanvas::MapCanvas(const ScanGrid& grid, double pixels_per_step) {
  grid.validate();
  pixels_per_um = pixels_per_step / grid.step_um;
  width = std::max(1, static_cast<int>(std::lround(grid.field_width_um() * pixels_per_um)));
  height = std::max(1, static_cast<int>(std::lround(grid.field_height_um() * pixels_per_um)));
  point.assign(static_cast<size_t>(width) * height, -1);
  const double dy = grid.row_spacing_um();
  for (int i = 0; i < height; ++i)
    for (int j = 0; j < width; ++j) {
      // Image pixel centre in µm, with point (0, 0) at the centre of the first cell.
      const double x = (j + 0.5) / pixels_per_um - 0.5 * grid.step_um, y = (i + 0.5) / pixels_per_um - 0.5 * dy;
      int row = static_cast<int>(std::lround(y / dy));
      row = std::clamp(row, 0, grid.rows - 1);
      double xr = x;
      if (grid.kind == GridKind::hexagonal && (row & 1)) xr -= 0.5 * grid.step_um;
      int col = std::clamp(static_cast<int>(std::lround(xr / grid.step_um)), 0, grid.cols - 1);
      if (grid.kind == GridKind::hexagonal) {  // the nearest of the candidates in neighbouring rows
        double best = INFINITY;
        for (int r = std::max(0, row - 1); r <= std::min(grid.rows - 1, row + 1); ++r) {
          const double off = (r & 1) ? 0.5 * grid.step_um : 0.0;
          const int c = std::clamp(static_cast<int>(std::lround((x - off) / grid.step_um)), 0, grid.cols - 1);
          const double d = std::hypot(x - (c * grid.step_um + off), y - r * dy);
          if (d < best) best = d, row = r, col = c;
        }
      }
      point[static_cast<size_t>(i) * width + j] = static_cast<long>(grid.index({row, col}));
    }
}

RgbImage draw_point_colours(const MapCanvas& canvas, const std::vector<Colour>& colours) {
  RgbImage img;
  img.width = canvas.width;
  img.height = canvas.height;
  img.rgb.assign(static_cast<size_t>(img.width) * img.height * 3, 255);
  for (size_t q = 0; q < canvas.point.size(); ++q) {
    if (canvas.point[q] < 0) continue;
    const Colour& c = colours[canvas.point[q]];
    std::copy(c.begin(), c.end(), img.rgb.begin() + q * 3);
  }
  return img;
}

namespace {
double srgb_gamma(double v) {
  v = std::clamp(v, 0.0, 1.0);
  return v <= 0.0031308 ? 12.92 * v : 1.055 * std::pow(v, 1 / 2.4) - 0.055;
}
Colour lab_to_srgb(double L, double a, double b) {
  // CIELAB (D65) → XYZ → linear sRGB → sRGB (IEC 61966-2-1).
  const double fy = (L + 16) / 116, fx = fy + a / 500, fz = fy - b / 200;
  auto finv = [](double f) { return f > 6.0 / 29 ? f * f * f : 3 * (6.0 / 29) * (6.0 / 29) * (f - 4.0 / 29); };
  const double X = 0.95047 * finv(fx), Y = finv(fy), Z = 1.08883 * finv(fz);
  const double r = 3.2406 * X - 1.5372 * Y - 0.4986 * Z;
  const double g = -0.9689 * X + 1.8758 * Y + 0.0415 * Z;
  const double bl = 0.0557 * X - 0.2040 * Y + 1.0570 * Z;
  return {static_cast<uint8_t>(std::lround(255 * srgb_gamma(r))),
          static_cast<uint8_t>(std::lround(255 * srgb_gamma(g))),
          static_cast<uint8_t>(std::lround(255 * srgb_gamma(bl)))};
}
}  // namespace

Colour sequential_colour(double t) {
  t = std::isfinite(t) ? std::clamp(t, 0.0, 1.0) : 0.0;
  const double L = 20 + 72 * t;
  const double hue = deg_to_rad(290 - 195 * t);  // blue-violet → teal → yellow
  const double chroma = 38 + 22 * std::sin(kPi * t) + 10 * t;
  return lab_to_srgb(L, chroma * std::cos(hue), chroma * std::sin(hue));
}

Colour ipf_colour(const Rotation& g, const Eigen::Vector3d& axis) {
  Eigen::Vector3d h = (g.matrix() * axis.normalized()).cwiseAbs();
  std::sort(h.data(), h.data() + 3, std::greater<>());  // h0 ≥ h1 ≥ h2 ≥ 0: the standard triangle
  Eigen::Vector3d rgb(h[0] - h[1], h[1] - h[2], h[2]);
  rgb /= std::max(rgb.maxCoeff(), 1e-12);
  for (int k = 0; k < 3; ++k) rgb[k] = std::sqrt(rgb[k]);  // lift the mid tones
  return {static_cast<uint8_t>(std::lround(255 * rgb[0])), static_cast<uint8_t>(std::lround(255 * rgb[1])),
          static_cast<uint8_t>(std::lround(255 * rgb[2]))};
}

RgbImage ipf_key(int size) {
  RgbImage img;
  img.width = size;
  img.height = size;
  img.rgb.assign(static_cast<size_t>(size) * size * 3, 255);
  // Stereographic coordinates: 001 at the origin, 101 at (tan 22.5°, 0), 111 at (0.366, 0.366).
  const double span = 0.45, margin = 0.12 * size;
  for (int i = 0; i < size; ++i)
    for (int j = 0; j < size; ++j) {
      const double X = (j - margin) / (size - 2 * margin) * span, Y = (size - margin - i) / (size - 2 * margin) * span;
      const double r2 = X * X + Y * Y;
      const Eigen::Vector3d u(2 * X / (1 + r2), 2 * Y / (1 + r2), (1 - r2) / (1 + r2));
      if (!(u.z() >= u.x() && u.x() >= u.y() && u.y() >= 0)) continue;
      const Colour c = ipf_colour(Rotation(), u);
      std::copy(c.begin(), c.end(), img.rgb.begin() + (static_cast<size_t>(i) * size + j) * 3);
    }
  const Colour black{0, 0, 0};
  auto at = [&](double X, double Y) {
    return std::pair<int, int>{static_cast<int>(margin + X / span * (size - 2 * margin)),
                               static_cast<int>(size - margin - Y / span * (size - 2 * margin))};
  };
  const auto [x0, y0] = at(0, 0);
  const auto [x1, y1] = at(std::tan(kPi / 8), 0);
  const auto [x2, y2] = at(0.366, 0.366);
  draw_text(img, std::max(0, x0 - 8), std::min(size - 8, y0 + 3), "001", black);
  draw_text(img, std::min(size - 18, x1 - 8), std::min(size - 8, y1 + 3), "101", black);
  draw_text(img, std::max(0, x2 - 8), std::max(0, y2 - 10), "111", black);
  return img;
}

Colour label_colour(int label) {
  if (label <= 0) return {0, 0, 0};
  uint32_t h = static_cast<uint32_t>(label) * 2654435761u;
  h ^= h >> 15;
  return {static_cast<uint8_t>(60 + (h & 0xff) % 180), static_cast<uint8_t>(60 + ((h >> 8) & 0xff) % 180),
          static_cast<uint8_t>(60 + ((h >> 16) & 0xff) % 180)};
}

namespace {
/// The glyph key of µ (UTF-8 C2 B5 in the text).
constexpr char kMicro = static_cast<char>(0xB5);

/// The glyph keys of a text: one per character, µ (two bytes in UTF-8) as one.
std::string glyph_keys(const std::string& text) {
  std::string keys;
  for (size_t k = 0; k < text.size(); ++k) {
    if (text[k] == static_cast<char>(0xC2) && k + 1 < text.size() && text[k + 1] == kMicro) {
      keys += kMicro;
      ++k;
    } else {
      keys += text[k];
    }
  }
  return keys;
}

// 5 × 7 glyphs, one string per row, '#' = ink.
const std::map<char, std::array<const char*, 7>>& glyphs() {
  static const std::map<char, std::array<const char*, 7>> g = {
      {'0', {" ### ", "#   #", "#  ##", "# # #", "##  #", "#   #", " ### "}},
      {'1', {"  #  ", " ##  ", "  #  ", "  #  ", "  #  ", "  #  ", " ### "}},
      {'2', {" ### ", "#   #", "    #", "   # ", "  #  ", " #   ", "#####"}},
      {'3', {"#####", "   # ", "  #  ", "   # ", "    #", "#   #", " ### "}},
      {'4', {"   # ", "  ## ", " # # ", "#  # ", "#####", "   # ", "   # "}},
      {'5', {"#####", "#    ", "#### ", "    #", "    #", "#   #", " ### "}},
      {'6', {"  ## ", " #   ", "#    ", "#### ", "#   #", "#   #", " ### "}},
      {'7', {"#####", "    #", "   # ", "  #  ", " #   ", " #   ", " #   "}},
      {'8', {" ### ", "#   #", "#   #", " ### ", "#   #", "#   #", " ### "}},
      {'9', {" ### ", "#   #", "#   #", " ####", "    #", "   # ", " ##  "}},
      {'.', {"     ", "     ", "     ", "     ", "     ", " ##  ", " ##  "}},
      {'-', {"     ", "     ", "     ", "#####", "     ", "     ", "     "}},
      {'+', {"     ", "  #  ", "  #  ", "#####", "  #  ", "  #  ", "     "}},
      {'%', {"##   ", "##  #", "   # ", "  #  ", " #   ", "#  ##", "   ##"}},
      {' ', {"     ", "     ", "     ", "     ", "     ", "     ", "     "}},
      {'u', {"     ", "     ", "#   #", "#   #", "#   #", "#  ##", " ## #"}},
      {'m', {"     ", "     ", "## # ", "# # #", "# # #", "# # #", "# # #"}},
      {'d', {"    #", "    #", " ## #", "#  ##", "#   #", "#   #", " ####"}},
      {'e', {"     ", "     ", " ### ", "#   #", "#####", "#    ", " ### "}},
      {'g', {"     ", " ####", "#   #", "#   #", " ####", "    #", " ### "}},
      {'f', {"  ## ", " #  #", " #   ", "###  ", " #   ", " #   ", " #   "}},
      {'x', {"     ", "     ", "#   #", " # # ", "  #  ", " # # ", "#   #"}},
      {'o', {"     ", "     ", " ### ", "#   #", "#   #", "#   #", " ### "}},
      {'r', {"     ", "     ", "# ## ", "##  #", "#    ", "#    ", "#    "}},
      {'a', {"     ", "     ", " ### ", "    #", " ####", "#   #", " ####"}},
      {'c', {"     ", "     ", " ### ", "#    ", "#    ", "#   #", " ### "}},
      {'t', {" #   ", " #   ", "###  ", " #   ", " #   ", " #  #", "  ## "}},
      {'i', {"  #  ", "     ", " ##  ", "  #  ", "  #  ", "  #  ", " ### "}},
      {'n', {"     ", "     ", "# ## ", "##  #", "#   #", "#   #", "#   #"}},
      {kMicro, {"     ", "     ", "#   #", "#   #", "#   #", "#### ", "#    "}},
  };
  return g;
}
}  // namespace

int text_width(const std::string& text, int scale) { return static_cast<int>(glyph_keys(text).size()) * 6 * scale; }

void draw_text(RgbImage& img, int x, int y, const std::string& utf8_text, Colour colour, int scale) {
  const std::string text = glyph_keys(utf8_text);
  for (size_t k = 0; k < text.size(); ++k) {
    const auto it = glyphs().find(text[k]);
    if (it == glyphs().end()) fail("draw_text: no glyph for '", text[k], "'");
    for (int r = 0; r < 7; ++r)
      for (int c = 0; c < 5; ++c) {
        if (it->second[r][c] != '#') continue;
        for (int a = 0; a < scale; ++a)
          for (int b = 0; b < scale; ++b) {
            const int px = x + (static_cast<int>(k) * 6 + c) * scale + b, py = y + r * scale + a;
            if (px < 0 || py < 0 || px >= img.width || py >= img.height) continue;
            std::copy(colour.begin(), colour.end(), img.rgb.begin() + (static_cast<size_t>(py) * img.width + px) * 3);
          }
      }
  }
}

RgbImage side_by_side(const RgbImage& a, const RgbImage& b, int gap) {
  RgbImage out;
  out.width = a.width + gap + b.width;
  out.height = std::max(a.height, b.height);
  out.rgb.assign(static_cast<size_t>(out.width) * out.height * 3, 255);
  auto blit = [&](const RgbImage& s, int x0) {
    for (int i = 0; i < s.height; ++i)
      std::copy(s.rgb.begin() + static_cast<size_t>(i) * s.width * 3,
                s.rgb.begin() + static_cast<size_t>(i + 1) * s.width * 3,
                out.rgb.begin() + (static_cast<size_t>(i) * out.width + x0) * 3);
  };
  blit(a, 0);
  blit(b, a.width + gap);
  return out;
}

RgbImage with_scale_bar(const RgbImage& map, double pixels_per_um) {
  // The largest round length (1, 2, 5 × 10^k µm) not longer than a third of the map width.
  const double max_um = map.width / 3.0 / pixels_per_um;
  double len = std::pow(10.0, std::floor(std::log10(max_um)));
  for (double f : {5.0, 2.0})
    if (len * f <= max_um) {
      len *= f;
      break;
    }
  const int bar_px = static_cast<int>(std::lround(len * pixels_per_um));
  RgbImage out = map;
  const int extra = 28;
  out.height += extra;
  out.rgb.resize(static_cast<size_t>(out.width) * out.height * 3, 255);
  const Colour black{0, 0, 0};
  for (int i = map.height + 8; i < map.height + 12; ++i)
    for (int j = 4; j < 4 + bar_px && j < out.width; ++j)
      std::copy(black.begin(), black.end(), out.rgb.begin() + (static_cast<size_t>(i) * out.width + j) * 3);
  char label[32];
  std::snprintf(label, sizeof label, "%g µm", len);
  draw_text(out, 8 + bar_px, map.height + 6, label, black, 1);
  return out;
}

RgbImage colour_bar(int height, double lo, double hi, int ticks, const std::string& quantity) {
  RgbImage img;
  img.width = std::max(70, text_width(quantity) + 8);
  img.height = height;
  img.rgb.assign(static_cast<size_t>(img.width) * img.height * 3, 255);
  const int top = quantity.empty() ? 6 : 18, bottom = height - 6;
  if (!quantity.empty()) draw_text(img, 4, 3, quantity, {0, 0, 0});
  for (int i = top; i <= bottom; ++i) {
    const Colour c = sequential_colour(double(bottom - i) / (bottom - top));
    for (int j = 4; j < 20; ++j)
      std::copy(c.begin(), c.end(), img.rgb.begin() + (static_cast<size_t>(i) * img.width + j) * 3);
  }
  for (int t = 0; t < ticks; ++t) {
    const double f = double(t) / (ticks - 1);
    const int y = static_cast<int>(std::lround(bottom - f * (bottom - top)));
    char label[32];
    std::snprintf(label, sizeof label, "%.2g", lo + f * (hi - lo));
    draw_text(img, 24, std::clamp(y - 3, 0, height - 7), label, {0, 0, 0});
  }
  return img;
}

}  // namespace orderband
