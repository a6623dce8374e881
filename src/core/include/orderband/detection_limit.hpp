// The smallest particle section a fraction map resolves: from the grid, the beam footprint and the map's noise.
#pragma once

#include <cstdint>
#include <vector>

#include "orderband/particles.hpp"
#include "orderband/process_share.hpp"
#include "orderband/scan_grid.hpp"

namespace orderband {

/// The beam footprint in the scan plane: a Gaussian of σ across the tilt direction (x_S, along a
/// row of points) and along it (y_S), in µm.
struct BeamFootprint {
  double sigma_x_um = 0.01, sigma_y_um = 0.01;
};

struct DetectionLimitSpec {
  /// The segmentation the map runs (threshold, connectivity, splits); its min_points and noise_sd
  /// are set from the limit.
  SegmentSpec segment;
  double max_false_particles = 0.5;    ///< expected noise components per map allowed at the minimum size
  int noise_maps = 16;                 ///< simulated maps of the matrix's noise
  double detection_probability = 0.9;  ///< the share of sections of the limit's diameter that are found
  int transfer_discs = 48;             ///< simulated sections per diameter for the transfer
  uint64_t seed = 1;
  /// The processes that divide the simulations among them (the results do not depend on it).
  ProcessShare share;
};

/// How a section's true diameter shows in the map: for isolated discs of each `true_um`, blurred by
/// the beam, with the map's noise, segmented as map does, the share found (`found`) and the mean ECD
/// of those found (`measured_um`, made non-decreasing). Small sections read too large (noise points
/// at their edge join them) or too small (the blur lowers them below the threshold); corrected()
/// takes a measured ECD back to the true diameter with the same mean reading.
struct SectionTransfer {
  std::vector<double> true_um, measured_um, found;
  /// The diameter from which the correction inverts the mean reading: the detection limit, or
  /// where the reading starts to follow the diameter if that is larger (below it the reading hardly
  /// changes with the diameter, so readings are scaled in proportion there).
  double from_um = 0;
  /// The mean reading of a section of diameter d_um (linear between the simulated diameters).
  double reading_at(double d_um) const;
  /// The true diameter whose mean reading is `ecd_um` (linear between the simulated diameters;
  /// above them the last offset; below the reading at from_um in proportion to it). The identity
  /// when nothing was simulated.
  double corrected(double ecd_um) const;
};

/// The detection limit: components of fewer than `min_points` points are what the matrix's noise
/// alone makes (at most max_false_particles per map of this grid, from simulated maps of
/// independent Gaussian noise of the map's spread about the matrix level), and `diameter_um` is
/// the smallest section that the map finds with the spec's detection probability (isolated discs
/// blurred by the beam footprint, plus that noise, segmented as map does: the transfer). Sections
/// whose corrected diameter is below it are not counted as particles, and the truth is counted at
/// the same diameter.
struct DetectionLimit {
  double diameter_um = 0;
  int min_points = 1;
  double noise_sd = 0, matrix_level = 0;
  double false_particles = 0;    ///< expected noise components of min_points or more per map
  double noise_diameter_um = 0;  ///< the ECD of min_points cells
  double half_found_um = 0;      ///< the diameter at which half the sections are found
  double detection_probability = 0;
  SectionTransfer transfer;
};

DetectionLimit detection_limit(const ScanGrid& grid, const BeamFootprint& beam, double matrix_level, double noise_sd,
                               const DetectionLimitSpec& spec = {});

/// Each particle's section and class diameters taken through transfer.corrected (map does this
/// before it classes the particles).
void correct_section_diameters(const SectionTransfer& transfer, Segmentation& seg);

/// The expected number of points above the threshold that a section of diameter `d_um` adds to a
/// map (the matrix's own rate taken off): the plane integral of Φ((L(x) − t)/σ) − Φ((m − t)/σ) over
/// the cell area, L = m + (1 − m)·P(x), P the beam's share inside the disc when centred at x.
double expected_points_above(const ScanGrid& grid, const BeamFootprint& beam, double d_um, double matrix_level,
                             double noise_sd, double threshold);

}  // namespace orderband
