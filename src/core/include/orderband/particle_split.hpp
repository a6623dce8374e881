// Touching particles split apart: markers from the significant maxima of the smoothed fraction map, then flooding.
#pragma once

#include <cstdint>
#include <vector>

#include "orderband/scan_grid.hpp"

namespace orderband {

/// The map smoothed by a Gaussian of `sigma_steps` (in steps, over the points within 3 σ), NaN
/// points left out of the weights and kept NaN.
std::vector<float> smooth_map(const ScanGrid& grid, const std::vector<float>& f, double sigma_steps);

/// Per point, the dynamic of the regional maximum it is (its height above the highest saddle on a
/// path to a higher maximum; the highest maximum of each connected part: infinity), 0 for points
/// that are not maxima. Neighbours by `connectivity` (4 or 8 on square grids, 6 on hexagonal).
/// Union–find over the points in descending order (the persistence of the maxima).
std::vector<float> maxima_dynamics(const ScanGrid& grid, const std::vector<float>& g, int connectivity);

/// Labels of the points where `inside` holds: connected parts are split by flooding from markers,
/// the maxima of `g` inside them whose dynamic is at least `depth` and whose saddle (height less
/// dynamic) lies at or below `max_saddle` (maxima on a plateau, such as the noise on a large
/// particle, are not particles of their own; the highest maximum of a part has no saddle and is
/// always a marker). A part without a marker keeps its own highest point as one, so an infinite
/// depth labels the plain connected parts. Flooding goes in descending order of
/// g, each point taking the label of the neighbour it is reached from. 0: outside.
std::vector<int32_t> split_by_markers(const ScanGrid& grid, const std::vector<float>& g,
                                      const std::vector<uint8_t>& inside, double depth, double max_saddle,
                                      int connectivity);

}  // namespace orderband
