// The smallest particle section a fraction map resolves: from the grid, the beam footprint and the map's noise.
#pragma once

#include <cstdint>

#include "orderband/scan_grid.hpp"

namespace orderband {

/// The beam footprint in the scan plane: a Gaussian of σ across the tilt direction (x_S, along a
/// row of points) and along it (y_S), in µm.
struct BeamFootprint {
  double sigma_x_um = 0.01, sigma_y_um = 0.01;
};

struct DetectionLimitSpec {
  double threshold = 0.5;            ///< the segmentation's threshold on f
  int connectivity = 8;              ///< the segmentation's connectivity (square grids)
  double max_false_particles = 0.5;  ///< expected noise components per map allowed at the minimum size
  int noise_maps = 16;               ///< simulated maps of the matrix's noise
  uint64_t seed = 1;
};

/// The detection limit: components of fewer than `min_points` points are what the matrix's noise
/// alone makes (at most max_false_particles per map of this grid, from simulated maps of
/// independent Gaussian noise of the map's spread about the matrix level), and `diameter_um` is
/// the smallest section whose blurred image (disc ⊗ beam footprint, plus that noise) gives on
/// average at least `min_points` points above the threshold: at that size about half the sections
/// are found. Sections below it are not counted as particles.
struct DetectionLimit {
  double diameter_um = 0;
  int min_points = 1;
  double noise_sd = 0, matrix_level = 0;
  double false_particles = 0;    ///< expected noise components of min_points or more per map
  double noise_diameter_um = 0;  ///< the ECD of min_points cells
};

DetectionLimit detection_limit(const ScanGrid& grid, const BeamFootprint& beam, double matrix_level, double noise_sd,
                               const DetectionLimitSpec& spec = {});

/// The expected number of points above the threshold that a section of diameter `d_um` adds to a
/// map (the matrix's own rate taken off): the plane integral of Φ((L(x) − t)/σ) − Φ((m − t)/σ) over
/// the cell area, L = m + (1 − m)·P(x), P the beam's share inside the disc when centred at x.
double expected_points_above(const ScanGrid& grid, const BeamFootprint& beam, double d_um, double matrix_level,
                             double noise_sd, double threshold);

}  // namespace orderband
