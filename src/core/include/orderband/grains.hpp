// Grains: flood-fill segmentation by misorientation, mean orientations, kernel-average misorientation.
#pragma once

#include <optional>
#include <vector>

#include "orderband/rotation.hpp"
#include "orderband/scan_grid.hpp"

namespace orderband {

struct GrainSpec {
  double threshold_deg = 5.0;  ///< neighbours closer than this belong to one grain
  int min_points = 4;          ///< smaller grains are merged into their closest neighbour grain
  /// Split grains whose orientations form two groups further apart than the threshold, joined
  /// only through a few in-between points (beam-mixed patterns at a boundary chain the flood fill).
  bool split_bimodal = true;
};

struct GrainMap {
  std::vector<int32_t> id;     ///< per point: grain id 1…n, 0 for points without an orientation
  std::vector<Rotation> mean;  ///< per grain (index id − 1)
  std::vector<int> size;       ///< points per grain
  int count() const { return static_cast<int>(mean.size()); }
};

/// Flood fill over neighbours (8 on square grids, 6 on hexagonal ones) with
/// a symmetry-aware misorientation threshold; grains whose orientations form two
/// separate groups are split (GrainSpec::split_bimodal); grains below min_points are
/// merged into the touching grain of smallest mean misorientation (or left
/// as they are if none touches). Grain ids follow scan order of first points.
GrainMap segment_grains(const ScanGrid& grid, const std::vector<std::optional<Rotation>>& orientations,
                        const CrystalSymmetry& symmetry, const GrainSpec& spec = {});

/// Kernel-average misorientation (degrees): per point, the mean
/// misorientation to its neighbours of the same grain; NaN without any.
std::vector<float> kernel_average_misorientation(const ScanGrid& grid,
                                                 const std::vector<std::optional<Rotation>>& orientations,
                                                 const GrainMap& grains, const CrystalSymmetry& symmetry);

/// Kernel-mean orientations: per point, the mean of the orientations of the points of its own
/// grain within `radius` steps (a (2r + 1)² window of rows and columns, the point included), each
/// taken as its symmetric equivalent nearest the point's own. Averaging n points divides random
/// orientation errors by about √n while following orientation gradients longer than the window.
/// Points without a grain keep what they have.
std::vector<std::optional<Rotation>> kernel_mean_orientations(const ScanGrid& grid,
                                                              const std::vector<std::optional<Rotation>>& orientations,
                                                              const GrainMap& grains, const CrystalSymmetry& symmetry,
                                                              int radius);

}  // namespace orderband
