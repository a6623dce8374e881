// NumPy .npy files (version 1.0, little-endian, C order) for maps.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace orderband {

/// Writes a rows × cols float32 array atomically.
void write_npy_float32(const std::string& path, int rows, int cols, const std::vector<float>& values);
/// Writes a rows × cols int32 array atomically.
void write_npy_int32(const std::string& path, int rows, int cols, const std::vector<int32_t>& values);

struct NpyArray {
  std::vector<size_t> shape;
  std::vector<float> values;  ///< converted from float32, float64 or int32
};
/// Reads a little-endian float32, float64 or int32 array in C order.
NpyArray read_npy(const std::string& path);

}  // namespace orderband
