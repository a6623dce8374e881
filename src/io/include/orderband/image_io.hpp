// Greyscale and colour image files: PNG (libpng) and TIFF (libtiff).
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "orderband/image.hpp"

namespace orderband {

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
/// Writes a 32-bit float greyscale TIFF atomically (width × height values, row-major; NaN kept).
void write_tiff_float32(const std::string& path, int width, int height, const std::vector<float>& values);
/// Writes a 16-bit greyscale TIFF atomically (for tests and users' tools).
void write_tiff_gray(const std::string& path, const GrayImage& image);

}  // namespace orderband
