// A phase's backscattered intensity over every direction, from many-beam dynamical diffraction.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "orderband/bloch_waves.hpp"
#include "orderband/preprocess.hpp"
#include "orderband/sphere.hpp"

namespace orderband {

/// What a dynamical sphere is computed with (the beam set: kSphereBeams).
struct DynamicalSphereSpec {
  int nside = 128;
  double kilovolts = 20;
  BeamSetSpec beams = kSphereBeams;
  AbsorptionSpec absorption;
  DepthSpec depth;
};

/// The Laue group's fundamental sector: every direction has one image in it, the image closest
/// to a fixed generic direction (the sector is that direction's Dirichlet cell under the group,
/// inversion included).
class LaueSector {
 public:
  explicit LaueSector(const Phase& phase);
  Eigen::Vector3d canonical(const Eigen::Vector3d& unit) const;
  /// The group's operations (proper rotations and their products with the inversion).
  const std::vector<Eigen::Matrix3d>& operations() const { return ops_; }

 private:
  std::vector<Eigen::Matrix3d> ops_;
  Eigen::Vector3d reference_;
};

struct DynamicalSphere {
  SphereMap intensity;           ///< backscattered intensity leaving the crystal along each direction (weight 1)
  size_t directions_solved = 0;  ///< Bloch-wave solutions computed (the sector and its rim)
  double mean_strong_beams = 0;  ///< strong beams per solution
};

/// The backscattered intensity (backscatter_intensity) for every HEALPix pixel: solved at the
/// pixel centres the fundamental sector needs (the sector's pixels and those its images are
/// interpolated from), then unfolded: each pixel takes the bilinear interpolation at its
/// direction's image in the sector. Electrons leaving along u are, by reciprocity, the wave
/// incident along −u. Threads share the solutions; the result does not depend on their number.
DynamicalSphere dynamical_sphere(const Phase& phase, const DynamicalSphereSpec& spec, const ProgressFn& progress = {});

}  // namespace orderband
