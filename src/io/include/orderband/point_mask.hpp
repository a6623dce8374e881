// Masks of scan points read from files (reference regions drawn or computed elsewhere).
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "orderband/scan_grid.hpp"

namespace orderband {

/// Reads a mask of the scan's points, one value per point in scan order, 1 where the file is
/// non-zero: a .npy array of rows × cols (float32, float64 or int32), or a greyscale PNG or TIFF of
/// cols × rows pixels (image row = scan row). Any other shape is an error naming the file and both
/// shapes.
std::vector<uint8_t> read_point_mask(const std::string& path, const ScanGrid& grid);

}  // namespace orderband
