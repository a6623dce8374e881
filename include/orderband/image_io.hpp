// Greyscale and colour image files: PNG (libpng) and TIFF (libtiff).
#pragma once

#include <cstdint>
#include <string>
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

/// Reads an 8- or 16-bit greyscale PNG or TIFF (chosen by the extension:
/// .png, .tif, .tiff). Colour images, palettes and other depths are refused
/// with an error naming the file.
GrayImage read_gray_image(const std::string& path);

/// Writes a greyscale PNG (8 or 16 bit) atomically.
void write_png_gray(const std::string& path, const GrayImage& image);
/// Writes an RGB PNG atomically; `text` key/value pairs go into tEXt chunks
/// (tool version, parameters).
void write_png_rgb(const std::string& path, const RgbImage& image,
                   const std::vector<std::pair<std::string, std::string>>& text = {});
/// Writes a 16-bit greyscale TIFF atomically (for tests and users' tools).
void write_tiff_gray(const std::string& path, const GrayImage& image);

}  // namespace orderband
