// The unit sphere on a HEALPix grid: back-projection of patterns, mean spheres, stereographic images.
#pragma once

#include <Eigen/Core>
#include <memory>
#include <string>
#include <vector>

#include "orderband/detector_geometry.hpp"
#include "orderband/image.hpp"
#include "orderband/rotation.hpp"

namespace orderband {

/// HEALPix pixelisation (Górski et al., ApJ 622 (2005) 759), RING ordering:
/// 12·nside² pixels of equal area 4π/(12·nside²).
class SphereGrid {
 public:
  explicit SphereGrid(int nside);
  ~SphereGrid();
  SphereGrid(const SphereGrid&);
  SphereGrid& operator=(const SphereGrid&) = delete;

  int nside() const { return nside_; }
  long npix() const { return 12L * nside_ * nside_; }
  double pixel_area_sr() const;
  /// Nominal resolution sqrt(4π / npix) in radians.
  double resolution_rad() const;
  long pixel_of(const Eigen::Vector3d& unit) const;
  Eigen::Vector3d centre_of(long pixel) const;
  /// The four pixels a direction is interpolated from and their bilinear weights (HEALPix's
  /// ring interpolation; the weights sum to 1).
  void interpolation(const Eigen::Vector3d& unit, long pixel[4], double weight[4]) const;

  /// Smallest power-of-two nside whose resolution is at most `target_rad`.
  static int nside_for(double target_rad);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
  int nside_;
};

/// A map on the sphere with a coverage count per pixel: value = sum / weight.
struct SphereMap {
  explicit SphereMap(const SphereGrid& grid) : grid(grid), sum(grid.npix(), 0.0), weight(grid.npix(), 0.0) {}
  SphereGrid grid;
  std::vector<double> sum, weight;
  double value(long pixel) const { return weight[pixel] > 0 ? sum[pixel] / weight[pixel] : 0.0; }
  /// Value at a direction (nearest pixel); NaN where nothing was projected.
  double at(const Eigen::Vector3d& unit) const;
  /// Fraction of pixels with coverage.
  double coverage() const;
  void add(const SphereMap& other);
};

/// Both phases' spheres of a pair (a many-beam renderer or reference reads them; not owned).
struct PhaseSpheres {
  const SphereMap* ordered = nullptr;
  const SphereMap* disordered = nullptr;
};

/// Precomputed unit directions (sample frame) and solid angles of a detector's pixels.
struct DetectorRays {
  explicit DetectorRays(const DetectorGeometry& geometry);
  int width = 0, height = 0;
  std::vector<Eigen::Vector3d> direction;  ///< per pixel, row-major
  std::vector<double> solid_angle;         ///< per pixel (sr): L / r³ in pixel units
};

/// Adds a preprocessed pattern, seen at orientation g, into a crystal-frame
/// map: each pixel inside the mask (mask may be empty: all pixels) adds its
/// value × solid angle to the HEALPix pixel of its crystal direction, and
/// its solid angle to the weight.
void back_project(const float* pattern, const std::vector<uint8_t>& mask, const DetectorRays& rays, const Rotation& g,
                  SphereMap& into);

/// The sphere pixel of each detector pixel's crystal direction at orientation g (−1 outside the
/// mask): the costly half of back_project, which threads can share out.
void sphere_pixels(const std::vector<uint8_t>& mask, const DetectorRays& rays, const Rotation& g,
                   const SphereGrid& grid, long* pixel);

/// back_project with the sphere pixels given (sphere_pixels).
void back_project(const float* pattern, const std::vector<uint8_t>& mask, const DetectorRays& rays, const long* pixel,
                  SphereMap& into);

/// The map folded by the crystal symmetry: every pixel takes the
/// weight-averaged value of its symmetric equivalents.
SphereMap fold_by_symmetry(const SphereMap& map, const CrystalSymmetry& symmetry);

/// Stereographic projection of the upper hemisphere (z ≥ 0 of the crystal
/// frame, seen from +z, x to the right, y up) as a greyscale-to-colour image
/// of size × size pixels: values scaled between the 1st and 99th percentiles.
/// Pixels outside the circle or without coverage are white.
RgbImage stereographic_image(const SphereMap& map, int size);
/// Same for a signed map (e.g. a difference): blue negative, white zero, red positive.
RgbImage stereographic_image_signed(const SphereMap& map, int size);

}  // namespace orderband
