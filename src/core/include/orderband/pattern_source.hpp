// Pattern sources: where the patterns are stored, and the stream of patterns every stage reads.
#pragma once

#include <cstddef>
#include <map>
#include <memory>
#include <mutex>
#include <string>

#include "orderband/enum_names.hpp"
#include "orderband/scan_grid.hpp"

namespace orderband {

enum class PatternFormat { raw, hdf5, images };
enum class SampleType { uint8, uint16, float32 };
template <>
struct EnumNames<PatternFormat> {
  static constexpr std::array<std::pair<PatternFormat, std::string_view>, 3> names{
      {{PatternFormat::raw, "raw"}, {PatternFormat::hdf5, "hdf5"}, {PatternFormat::images, "images"}}};
};
template <>
struct EnumNames<SampleType> {
  static constexpr std::array<std::pair<SampleType, std::string_view>, 3> names{
      {{SampleType::uint8, "uint8"}, {SampleType::uint16, "uint16"}, {SampleType::float32, "float32"}}};
};

/// Where the patterns are and how they are stored. Paths are absolute (the
/// scan description resolves relative paths against its own folder).
struct PatternSourceSpec {
  PatternFormat format = PatternFormat::raw;
  std::string path;                             ///< raw file, HDF5 file, or image folder
  SampleType sample_type = SampleType::uint16;  ///< raw only: little-endian samples
  size_t header_bytes = 0;                      ///< raw only: bytes to skip at the start
  size_t trailer_bytes = 0;  ///< raw only: bytes after the last pattern (the size must match exactly)
  int width_px = 0;          ///< raw: required; others: 0 = take from the data, else checked
  int height_px = 0;
  std::string dataset;  ///< HDF5: dataset path, shaped [points, h, w] or [rows, cols, h, w]
  /// Images: file name with placeholders {index}, {row}, {col}, optionally
  /// zero-padded as {index:05}; e.g. "p_{row:03}_{col:03}.png".
  std::string name_pattern;
};

SampleType parse_sample_type(const std::string& name);  ///< "uint8", "uint16", "float32"
const char* sample_type_name(SampleType t);

/// A stream of patterns as float32, in scan order (row-major over the grid).
/// Implementations read only the requested chunk: memory stays bounded by
/// the chunk, whatever the scan size.
class PatternSource {
 public:
  virtual ~PatternSource() = default;
  size_t count() const { return count_; }
  int width() const { return width_; }
  int height() const { return height_; }
  size_t pixels() const { return static_cast<size_t>(width_) * height_; }
  /// One line describing the source, for messages and provenance.
  virtual std::string describe() const = 0;
  /// Reads patterns [first, first + n) into out (n · pixels() floats). A pattern that cannot be
  /// used as stored (a NaN or infinite pixel, a missing, unreadable or wrongly sized image) is
  /// filled with NaN and recorded in faults(): the scan goes on and the point is unusable (a
  /// point that fails never stops the scan). Throws orderband::Error only where the whole source
  /// fails (a read past the end, an HDF5 read error).
  virtual void read(size_t first, size_t n, float* out) = 0;
  /// The patterns found faulty so far, by point index, with the reason.
  std::map<size_t, std::string> faults() const;

 protected:
  /// Fills one pattern with NaN and records why (thread-safe).
  void mark_faulty(size_t index, const std::string& reason, float* pattern);
  /// Marks every pattern of out[0, n) holding a non-finite pixel (points first…first + n − 1).
  void mark_non_finite(float* out, size_t n, size_t first, const ScanGrid& grid);
  size_t count_ = 0;
  int width_ = 0, height_ = 0;

 private:
  mutable std::mutex faults_mutex_;
  std::map<size_t, std::string> faults_;
};

}  // namespace orderband
