// Pattern preprocessing: backgrounds, mask, hot pixels, normalisation, neighbour averaging.
#pragma once

#include <algorithm>
#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "orderband/enum_names.hpp"
#include "orderband/gaussian_blur.hpp"
#include "orderband/image.hpp"
#include "orderband/pattern_source.hpp"
#include "orderband/scan_grid.hpp"

namespace orderband {

enum class StaticBackgroundKind { none, scan_mean, file };
enum class MaskKind { none, circle, file };
/// Names in scan descriptions and summaries ("file": the description gives the image's path instead).
template <>
struct EnumNames<StaticBackgroundKind> {
  static constexpr std::array<std::pair<StaticBackgroundKind, std::string_view>, 3> names{
      {{StaticBackgroundKind::none, "none"},
       {StaticBackgroundKind::scan_mean, "scan_mean"},
       {StaticBackgroundKind::file, "file"}}};
};
template <>
struct EnumNames<MaskKind> {
  static constexpr std::array<std::pair<MaskKind, std::string_view>, 3> names{
      {{MaskKind::none, "none"}, {MaskKind::circle, "circle"}, {MaskKind::file, "file"}}};
};

/// Preprocessing parameters; every default is documented in the README.
struct PreprocessSpec {
  StaticBackgroundKind static_background = StaticBackgroundKind::scan_mean;
  std::string static_background_file;  ///< greyscale PNG/TIFF of the pattern size (kind = file)
  /// The scan-mean background is blurred by a Gaussian of this σ (px) so that
  /// the bands of the few grains a small scan holds do not enter it.
  /// Negative: 0.1 × pattern width; 0: the raw mean (scans of many grains).
  double static_background_sigma_px = -1;
  /// The scan mean from at most this many points, evenly spread over the scan (0: every point).
  /// The mean of a few thousand patterns is exact to far below the counting noise of one, and it
  /// spares a whole pass over a large stack.
  size_t scan_mean_points = 4096;
  /// σ of the dynamic-background Gaussian (px). Negative: 0.1 × pattern width.
  /// 0: off.
  double dynamic_background_sigma_px = -1;
  MaskKind mask = MaskKind::circle;
  double mask_radius_px = 0;  ///< circle radius; 0: inscribed circle, min(w, h)/2
  std::string mask_file;      ///< greyscale PNG/TIFF, non-zero = used (kind = file)
  bool hot_pixel_filter = false;
  double hot_pixel_threshold = 8;  ///< replace a pixel deviating by more than this many MADs from its 3×3 median
  /// Neighbour averaging in scan space: Gaussian weights exp(−d²/2σ²), d in
  /// steps, over the point and its neighbours (8 on square grids, 6 on
  /// hexagonal ones). 0: off.
  double neighbour_sigma_steps = 0;
  /// Step 4 divides by the standard deviation (true) or only subtracts the mean (false). Without
  /// the division a pattern stays linear in the mixture of phases under the beam (the standard
  /// deviation depends on the band contrast, which depends on the phase): the fraction stage.
  bool unit_variance = true;
};

/// The images a spec names (mask_file, static_background_file), read by the io layer
/// (`read_preprocess_images`); empty where the spec names none.
struct PreprocessImages {
  std::optional<GrayImage> mask, static_background;
};

/// Per-pattern preprocessing, in this order:
/// 1. hot-pixel filter (optional);
/// 2. static background: divide by the background normalised to mean 1;
/// 3. dynamic background: divide by the pattern's own Gaussian blur;
/// 4. normalise inside the mask to zero mean and unit variance (0 outside; see unit_variance).
/// Division (not subtraction) because the smooth background multiplies the
/// band contrast. A pattern with no variation inside the mask is unusable.
class Preprocessor {
 public:
  /// `static_background` must have width·height values (ignored for kind none); `mask_image` is
  /// the mask file's image when spec.mask is file.
  Preprocessor(const PreprocessSpec& spec, int width, int height, std::vector<float> static_background = {},
               const GrayImage* mask_image = nullptr);

  /// In place. Returns false (and zeroes the pattern) if the pattern is unusable.
  bool apply(float* pattern) const;

  const std::vector<uint8_t>& mask() const { return mask_; }
  size_t mask_count() const { return mask_count_; }
  int width() const { return w_; }
  int height() const { return h_; }
  const PreprocessSpec& spec() const { return spec_; }
  double dynamic_sigma_px() const { return blur_ ? blur_->sigma_px() : 0.0; }
  /// The static background as used (normalised to mean 1 inside the mask); empty if none.
  std::vector<float> static_background() const;

 private:
  PreprocessSpec spec_;
  int w_, h_;
  std::vector<float> static_inv_;  ///< 1 / normalised static background
  std::vector<uint8_t> mask_;
  size_t mask_count_ = 0;
  std::unique_ptr<GaussianBlur> blur_;
};

/// Each pixel's 3×3 median (edges clamped), its absolute deviation from it, and the scale of those
/// deviations over the pattern: 1.4826 × their median (a normal spread's σ).
struct LocalMedian {
  std::vector<float> median, deviation;
  double mad = 0;
};
LocalMedian local_median_3x3(const float* pattern, int width, int height);

/// Replaces pixels deviating from their 3×3 median by more than
/// `threshold` × 1.4826 × MAD (of the whole pattern's deviations) with the median.
/// Returns the number of pixels replaced.
size_t filter_hot_pixels(float* pattern, int width, int height, double threshold);

/// Progress callback: (done, total) in points.
using ProgressFn = std::function<void(size_t done, size_t total)>;

/// Mean raw pattern of the scan: of every point, streamed in chunks of `chunk` points, or of at
/// most `at_most` points evenly spread over the scan (spread_sample) when the scan has more.
std::vector<float> scan_mean_pattern(PatternSource& source, size_t chunk = 256, const ProgressFn& progress = {},
                                     size_t at_most = 0);

/// Builds the preprocessor for a source: takes the static background image or computes the scan
/// mean as the spec asks.
Preprocessor make_preprocessor(const PreprocessSpec& spec, PatternSource& source, const PreprocessImages& images = {},
                               const ProgressFn& progress = {});

/// Neighbour averaging of one scan row. `rows[0..2]` are the preprocessed
/// rows r−1, r, r+1 (nullptr outside the grid), each cols · pixels floats,
/// with per-point usable flags. Unusable points take no part; the result is
/// renormalised inside the mask. Writes row r into `out`.
void neighbour_average_row(const ScanGrid& grid, double sigma_steps, int row, const float* const rows[3],
                           const uint8_t* const usable[3], const std::vector<uint8_t>& mask, size_t pixels, float* out,
                           uint8_t* out_usable, bool unit_variance = true);

/// Single points of a scan read and preprocessed as PreprocessedRows gives them (their neighbours
/// read too where the preprocessing averages over them): for the stages that need a sample of the
/// scan rather than every pattern.
class PreprocessedPoints {
 public:
  PreprocessedPoints(PatternSource& source, const ScanGrid& grid, const Preprocessor& pre);
  /// The points `index` (scan order is cheapest) into `patterns` (index.size() · pixels floats)
  /// with their usable flags.
  void load(const std::vector<size_t>& index, std::vector<float>& patterns, std::vector<uint8_t>& usable);
  /// Loads `points` in batches of `batch` and calls use(batch's points, patterns, usable) for each,
  /// in order: memory bounded by one batch.
  template <class Use>
  void load_in_batches(const std::vector<size_t>& points, size_t batch, Use&& use) {
    std::vector<float> patterns;
    std::vector<uint8_t> usable;
    for (size_t first = 0; first < points.size(); first += batch) {
      const std::vector<size_t> part(points.begin() + first, points.begin() + std::min(points.size(), first + batch));
      load(part, patterns, usable);
      use(part, patterns, usable);
    }
  }

 private:
  PatternSource& source_;
  const ScanGrid& grid_;
  const Preprocessor& pre_;
};

/// At most `at_most` of `points` (all of them for 0), evenly spread over the list: the
/// ((i + ½)·n / at_most)-th for i = 0 … at_most − 1, in the list's order.
std::vector<size_t> spread_sample(const std::vector<size_t>& points, size_t at_most);
/// The i-th of `at_most` positions spread evenly over n: ⌊(i + ½)·n / at_most⌋ (spread_sample's rule).
inline size_t spread_position(size_t i, size_t n, size_t at_most) {
  return static_cast<size_t>((static_cast<double>(i) + 0.5) * n / at_most);
}

/// Streams preprocessed scan rows with bounded memory (three rows of
/// patterns plus one output row), neighbour-averaged if the spec asks.
class PreprocessedRows {
 public:
  PreprocessedRows(PatternSource& source, const ScanGrid& grid, const Preprocessor& pre);
  /// Fills row `r` (cols · pixels floats) and its usable flags; rows must be
  /// requested in order 0, 1, 2, … Returns false when all rows are done.
  bool next(std::vector<float>& patterns, std::vector<uint8_t>& usable);
  /// Passes over the next row without reading it (its neighbours are read when a row beside it is
  /// asked for). Returns false when all rows are done.
  bool skip() { return next_row_ < grid_.rows && (++next_row_, true); }
  int next_row() const { return next_row_; }

 private:
  void load(int row, std::vector<float>& patterns, std::vector<uint8_t>& usable);
  PatternSource& source_;
  ScanGrid grid_;
  const Preprocessor& pre_;
  int next_row_ = 0;
  std::vector<float> window_[3];
  std::vector<uint8_t> window_usable_[3];
  int window_rows_[3] = {-1, -1, -1};
};

}  // namespace orderband
