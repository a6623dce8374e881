// Images in memory: greyscale and RGB samples, row-major.
#pragma once

#include <cstdint>
#include <vector>

namespace orderband {

/// A greyscale image of 8- or 16-bit samples, row-major, row 0 at the top.
struct GrayImage {
  int width = 0, height = 0;
  int bits = 8;                  ///< 8 or 16
  std::vector<uint16_t> pixels;  ///< width·height samples
};

/// An 8-bit RGB image, row-major, 3 bytes per pixel.
struct RgbImage {
  int width = 0, height = 0;
  std::vector<uint8_t> rgb;
};

}  // namespace orderband
