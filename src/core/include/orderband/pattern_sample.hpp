// A sample of a scan's raw patterns, read before the run, that catches a wrongly declared pattern
// width and hot pixels left unfiltered.
#pragma once

#include <cstddef>
#include <optional>
#include <string>

#include "orderband/pattern_source.hpp"
#include "orderband/preprocess.hpp"

namespace orderband {

/// A declared width whose vertical-neighbour differences are this many times those of another width
/// of the same pixel count is taken as wrong. Measured on a 60 × 60 px synthetic scan (64-pattern
/// mean): declared as 50, 72, 45, 75, 40, 90, 30 px wide, the differences are 10–20 times those at
/// 60 px.
inline constexpr double kWrongWidthRatio = 3.0;
/// The same for a declared width that is a multiple k of the likely one: its "vertical neighbour"
/// is then k true rows down, which on a smooth pattern differs only a few times more (120, 180,
/// 240 px on the scan above: 2.5, 4.0, 5.2 times). Of a correct declaration, a divisor W/k is a
/// horizontal shift by a fraction of the width and differs far more, never less.
inline constexpr double kWrongMultipleRatio = 1.5;

/// Patterns `map` samples before the run (as `check` does by default).
inline constexpr size_t kPatternSamplePoints = 64;

/// Hot pixels per pattern above which `check` and `map` advise the hot-pixel filter.
inline constexpr double kHotPixelsWarning = 1.0;

struct PatternSample {
  size_t patterns = 0;  ///< sampled patterns that could be read (faulty ones are skipped)
  int declared_width_px = 0, declared_height_px = 0;
  /// Among the widths W whose W × (pixels / W) layout holds the same pixels (both sides ≥ 8 px),
  /// the one whose vertically neighbouring pixels of the sample's mean pattern differ least.
  int likely_width_px = 0;
  /// Mean square difference of vertical neighbours at the declared width over that at the likely
  /// width (1 when they are the same width).
  double row_difference_ratio = 1;
  /// Isolated spikes per pattern: pixels brighter than each of their 8 neighbours by more than
  /// `hot_pixel_threshold` MADs (the hot-pixel filter's scale), counted whether the filter is on or not.
  double hot_pixels_per_pattern = 0;
  double hot_pixel_threshold = 0;
  bool width_wrong() const {
    if (likely_width_px == declared_width_px || likely_width_px <= 0) return false;
    const bool multiple = declared_width_px % likely_width_px == 0;
    return row_difference_ratio > (multiple ? kWrongMultipleRatio : kWrongWidthRatio);
  }
};

/// Reads up to `sample_points` raw patterns spread evenly over the scan (not preprocessed).
PatternSample sample_patterns(PatternSource& source, size_t sample_points, double hot_pixel_threshold);

/// Throws orderband::Error with one line when the sample shows that the patterns are stored with
/// another width than the one declared.
void require_declared_width(const PatternSample& sample, const std::string& source_description);

/// A warning when hot pixels are frequent and the filter is off; none otherwise.
std::optional<std::string> hot_pixel_warning(const PatternSample& sample, const PreprocessSpec& spec);

}  // namespace orderband
