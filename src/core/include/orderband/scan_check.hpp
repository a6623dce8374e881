// Validating a scan description against its data and summarising what a run will do.
#pragma once

#include <string>
#include <vector>

#include "orderband/ordering_pair.hpp"
#include "orderband/pattern_sample.hpp"
#include "orderband/scan_inputs.hpp"

namespace orderband {

struct FamilyVisibility {
  PairFamily family;
  double band_width_px = 0;  ///< 2θ_B over the angular pixel size at the pattern centre
};

/// Everything `orderband check` reports, computed without processing the whole scan.
struct ScanCheck {
  ScanConfig config;
  std::string source_description;
  int width_px = 0, height_px = 0;
  double field_width_um = 0, field_height_um = 0;
  double angular_width_deg = 0, angular_height_deg = 0, angular_pixel_deg = 0, max_angle_from_pc_deg = 0;
  Eigen::Vector3d pc_direction_sample{0, 0, 0};
  std::string pair_name;
  std::vector<FamilyVisibility> families;  ///< d ≥ d_min, both roles
  PatternSample sample;                    ///< raw patterns: the stored width, hot pixels
  size_t sampled_points = 0, sampled_unusable = 0;
  double preprocess_seconds_per_point = 0;  ///< measured on the sampled points, one thread
  double estimated_preprocess_seconds = 0;  ///< whole scan, one thread
  double estimated_memory_mb = 0;           ///< streaming window + maps
  std::vector<std::string> warnings;
};

/// From the scan's inputs (read_scan_inputs has already read and checked every file `map` reads):
/// the geometry, the pair's families, and up to `sample_points` patterns preprocessed (timed).
/// Throws orderband::Error with one clear line for the first problem found.
ScanCheck check_scan(const ScanInputs& inputs, size_t sample_points = 64, double d_min_A = 0.8);

}  // namespace orderband
