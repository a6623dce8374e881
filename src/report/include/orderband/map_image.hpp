// Drawing scan maps: point rasters, colour maps, inverse-pole-figure colours, keys, bars and small text.
#pragma once

#include <array>
#include <string>
#include <vector>

#include "orderband/image_io.hpp"
#include "orderband/rotation.hpp"
#include "orderband/scan_grid.hpp"

namespace orderband {

using Colour = std::array<uint8_t, 3>;

/// Which scan point each image pixel shows: the map drawn as seen from the
/// beam, columns to the right, rows downward, `pixels_per_step` image pixels
/// per scan step (hexagonal grids: nearest point).
struct MapCanvas {
  MapCanvas(const ScanGrid& grid, double pixels_per_step);
  int width = 0, height = 0;
  double pixels_per_um = 1;
  std::vector<long> point;  ///< per image pixel: point index, or −1 outside the grid
};

/// Image pixels per scan step so that the longer side of the map spans about `longest_side_px`
/// (at least 1, at most 8 per step).
double pixels_per_step(const ScanGrid& grid, double longest_side_px);

/// Colours each pixel by its point's colour.
RgbImage draw_point_colours(const MapCanvas& canvas, const std::vector<Colour>& colours);

/// Our perceptually ordered colour map: lightness rises linearly in CIELAB
/// from 20 to 92 while the hue turns from blue-violet through teal to yellow
/// at moderate chroma, so equal steps in value look like equal steps.
Colour sequential_colour(double t);  ///< t in [0, 1]

/// Inverse-pole-figure colour of the crystal direction along a sample axis
/// (cubic standard triangle 001–101–111: red, green, blue), the usual key of
/// the trade for cubic crystals.
Colour ipf_colour(const Rotation& g, const Eigen::Vector3d& sample_axis);
/// The key: the standard triangle in stereographic projection, labelled.
RgbImage ipf_key(int size);

/// A distinct colour per integer label (0: black).
Colour label_colour(int label);

/// Text in a 5 × 7 pixel font (digits, '.', '-', '+', '%', ' ', µ given as UTF-8, and the
/// letters a c d e f g i m n o r t u x), scaled by an integer factor; another character is an error.
void draw_text(RgbImage& img, int x, int y, const std::string& text, Colour colour, int scale = 1);
/// Width in pixels of a text at a scale.
int text_width(const std::string& text, int scale = 1);

/// Places `b` to the right of `a` with a gap, on white.
RgbImage side_by_side(const RgbImage& a, const RgbImage& b, int gap = 10);
/// Adds a white margin below the image with a scale bar of a round length in µm.
RgbImage with_scale_bar(const RgbImage& map, double pixels_per_um);
/// A vertical colour bar for the sequential map with tick labels from lo to hi, and the quantity's
/// name above it when given.
RgbImage colour_bar(int height, double lo, double hi, int ticks = 5, const std::string& quantity = "");

}  // namespace orderband
