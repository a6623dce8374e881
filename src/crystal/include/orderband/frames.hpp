// Directions tagged with the frame they are expressed in (see docs/conventions.md).
#pragma once

#include <Eigen/Core>

namespace orderband {

/// A unit vector in one named frame. Frames never mix silently: converting a
/// direction between frames goes through the object that owns the relation
/// (an orientation, the detector geometry).
template <class Frame>
class Direction {
 public:
  Direction() = default;
  /// Normalises v; v must be non-zero.
  explicit Direction(const Eigen::Vector3d& v) : v_(v.normalized()) {}
  const Eigen::Vector3d& vec() const { return v_; }
  double dot(const Direction& other) const { return v_.dot(other.v_); }
  Direction operator-() const { return Direction(-v_); }

 private:
  Eigen::Vector3d v_{0.0, 0.0, 1.0};
};

struct CrystalFrame {};   ///< orthonormal crystal frame: x ∥ a, z ∥ c*, y = z × x
struct SampleFrame {};    ///< x_S along the tilt axis, z_S into the sample
struct DetectorFrame {};  ///< x_D image right, y_D image up, z_D toward the sample
struct LabFrame {};       ///< z_L up against the beam, y_L toward the screen

using CrystalDirection = Direction<CrystalFrame>;
using SampleDirection = Direction<SampleFrame>;
using DetectorDirection = Direction<DetectorFrame>;
using LabDirection = Direction<LabFrame>;

}  // namespace orderband
