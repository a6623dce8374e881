// Point masks from .npy arrays or greyscale images.
#include "orderband/point_mask.hpp"

#include <filesystem>

#include "orderband/error.hpp"
#include "orderband/image_io.hpp"
#include "orderband/npy_io.hpp"

namespace orderband {

std::vector<uint8_t> read_point_mask(const std::string& path, const ScanGrid& grid) {
  const std::string ext = std::filesystem::path(path).extension().string();
  std::vector<uint8_t> mask(grid.count(), 0);
  if (ext == ".npy") {
    const NpyArray a = read_npy(path);
    if (a.shape.size() != 2 || a.shape[0] != static_cast<size_t>(grid.rows) ||
        a.shape[1] != static_cast<size_t>(grid.cols))
      fail("mask '", path, "' is not a ", grid.rows, " x ", grid.cols, " array (rows x cols of the scan)");
    for (size_t k = 0; k < mask.size(); ++k) mask[k] = a.values[k] != 0.0f;
    return mask;
  }
  const GrayImage img = read_gray_image(path);
  if (img.width != grid.cols || img.height != grid.rows)
    fail("mask '", path, "' is ", img.width, " x ", img.height, " pixels; the scan needs ", grid.cols, " x ", grid.rows,
         " (cols x rows)");
  for (size_t k = 0; k < mask.size(); ++k) mask[k] = img.pixels[k] != 0;
  return mask;
}

}  // namespace orderband
