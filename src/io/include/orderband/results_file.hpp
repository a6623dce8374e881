// A map's results for other tools: per-point arrays as .npy files, float TIFFs and one HDF5 file.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace orderband {

/// One per-point array of a map, row-major over the scan's rows × cols.
struct PointArray {
  std::string name;          ///< file stem and dataset name, e.g. "ordered_fraction"
  std::string unit;          ///< e.g. "1" (a fraction), "deg", "" (labels and codes)
  std::string description;   ///< one line for a reader of the file
  std::vector<float> f32;    ///< the values of a float array …
  std::vector<int32_t> i32;  ///< … or of an integer one (exactly one of the two is filled)
  bool is_float() const { return i32.empty(); }
};

/// A table as CSV text (lines starting with '#' are comments; the first other line is the header).
struct CsvTable {
  std::string name, csv;
};

/// Writes NAME.npy for every array (float32 or int32, shape rows × cols), each atomically.
void write_point_arrays_npy(const std::string& folder, int rows, int cols, const std::vector<PointArray>& arrays);

/// Writes NAME.tif for every float array: 32-bit float samples, one pixel per point (cols × rows
/// pixels, image row = scan row), each atomically.
void write_point_arrays_tiff(const std::string& folder, int rows, int cols, const std::vector<PointArray>& arrays);

/// Writes one HDF5 file atomically:
/// - root attributes `tool`, `version_line` (the provenance line), `rows`, `cols`;
/// - `/maps/NAME`: every array as a rows × cols dataset (float32 or int32) with the attributes
///   `unit` and `description`;
/// - `/tables/NAME/COLUMN`: every table column, float64 where every cell is a number (an empty
///   cell is NaN), else UTF-8 strings;
/// - `/summary_json`: the summary, as its JSON text.
void write_results_h5(const std::string& path, int rows, int cols, const std::vector<PointArray>& arrays,
                      const std::vector<CsvTable>& tables, const std::string& summary_json,
                      const std::string& provenance);

}  // namespace orderband
