// Touching particles split apart: markers from the significant maxima of the smoothed fraction map, then flooding.
#pragma once

#include <cstddef>
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
/// `max_saddle_share`: a marker's saddle must also lie at or below this share of its own height.
std::vector<int32_t> split_by_markers(const ScanGrid& grid, const std::vector<float>& g,
                                      const std::vector<uint8_t>& inside, double depth, double max_saddle,
                                      int connectivity, double max_saddle_share = 1.0);

/// The Euclidean distance, in steps, from every point where `in_part` holds to the nearest point of
/// the grid where it does not (infinity where there is none; NaN off the part), on square and
/// hexagonal grids: the exact squared distance by two passes of one-dimensional lower envelopes
/// (along the rows, then down each column position), in time proportional to the points.
std::vector<float> distance_to_outside(const ScanGrid& grid, const std::vector<uint8_t>& in_part);

/// Each labelled part split again by its shape: within the part's own points, the distance (in
/// steps) of every point to the nearest point outside the part, and the part flooded from the
/// maxima of that distance whose dynamic reaches `depth_steps` and whose saddle (the neck's half
/// width) is at most kShapeNeckShare of the maximum (the body's inscribed radius). Touching
/// sections that the map shows at a uniform fraction, with no dip between them, are told apart by
/// their outline; the ragged outline of one large body (noise at the threshold) has no such neck.
/// Holes (points enclosed by the part) count as the part, and points beyond the map's border do
/// not count as outside. The distance is exact and takes time in proportion to the part's box
/// (distance_to_outside). Labels are renumbered from 1 in scan order of the parts; 0 stays 0.
inline constexpr double kShapeNeckShare = 0.7;
std::vector<int32_t> split_by_shape(const ScanGrid& grid, const std::vector<int32_t>& label, double depth_steps,
                                    int connectivity);

/// The second moments of points' positions about their centroid (µm²: x along columns, y along
/// rows), and from them, with each point taken as a cell (its own moment step²/12 added), the
/// aspect ratio sqrt(λ_max/λ_min) and the major axis's angle from x toward y (rad, in (−π/2, π/2]).
struct ShapeMoments {
  double cx = 0, cy = 0;  ///< centroid (µm)
  double mxx = 0, myy = 0, mxy = 0;
  double aspect_ratio = 1, major_axis_rad = 0;
};
ShapeMoments shape_moments(const ScanGrid& grid, const std::vector<size_t>& points);

/// Parts (each a list of point indices) split by their elongation: a section of a near-equiaxed
/// particle is near-circular, so a part whose second-moment aspect ratio (point cells of one step
/// included, as Particle2D's) reaches `max_aspect` is taken for touching sections and cut in two by
/// two-means on the point positions (started from the halves across its major axis), the halves
/// split again the same way; a cut is kept only if each half holds at least `min_points` points.
/// Parts of more than `max_points` points are left whole (bodies larger than the sections this is
/// for). Two touching discs of radius 2 steps, whose neck the discretisation fills, read as a 2:1
/// outline; one noisy disc of that size reads 1.1–1.6 (measured on synthetic maps).
std::vector<std::vector<size_t>> split_elongated(const ScanGrid& grid, std::vector<std::vector<size_t>> parts,
                                                 double max_aspect, int min_points, size_t max_points);

}  // namespace orderband
