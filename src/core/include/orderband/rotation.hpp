// Orientations: passive rotations from the sample frame to the crystal frame.
#pragma once

#include <Eigen/Core>
#include <Eigen/Geometry>
#include <cstdint>
#include <vector>

#include "orderband/frames.hpp"

namespace orderband {

/// A passive rotation g that maps sample-frame vectors to crystal-frame
/// vectors, v_C = g v_S (Rowenhorst et al., Modelling Simul. Mater. Sci. Eng.
/// 23 (2015) 083501, with P = −1). Stored as a unit quaternion, scalar first
/// and non-negative; with P = −1 it equals the Hamilton quaternion of the
/// active rotation whose matrix is gᵀ.
class Rotation {
 public:
  Rotation() = default;  ///< identity

  /// From a unit quaternion (q0, q1, q2, q3), scalar first; normalised and
  /// brought to q0 ≥ 0.
  static Rotation from_quaternion(double q0, double q1, double q2, double q3);
  /// From Bunge ZXZ Euler angles (radians).
  static Rotation from_bunge(double phi1, double Phi, double phi2);
  /// From a passive rotation matrix g (orthonormalised first).
  static Rotation from_matrix(const Eigen::Matrix3d& g);
  /// From a rotation of `angle` radians about a unit axis (same sense as
  /// the quaternion: q = (cos ω/2, sin ω/2 n)).
  static Rotation from_axis_angle(const Eigen::Vector3d& axis, double angle);

  /// Scalar-first components (q0 ≥ 0).
  Eigen::Vector4d quaternion() const { return {q_.w(), q_.x(), q_.y(), q_.z()}; }
  /// The passive matrix g: rows are the crystal axes written in the sample frame.
  Eigen::Matrix3d matrix() const;
  /// Bunge (φ1, Φ, φ2) in radians, φ1, φ2 ∈ [0, 2π), Φ ∈ [0, π].
  Eigen::Vector3d bunge() const;
  /// Rotation angle ω ∈ [0, π] (radians).
  double angle() const;
  /// Unit rotation axis (z for the identity).
  Eigen::Vector3d axis() const;

  /// Composition with matrix semantics: (a * b).matrix() == a.matrix() * b.matrix(),
  /// i.e. b is applied first.
  Rotation operator*(const Rotation& b) const;
  Rotation inverse() const;

  CrystalDirection to_crystal(const SampleDirection& v) const { return CrystalDirection(matrix() * v.vec()); }
  SampleDirection to_sample(const CrystalDirection& v) const { return SampleDirection(matrix().transpose() * v.vec()); }

  const Eigen::Quaterniond& hamilton() const { return q_; }

 private:
  explicit Rotation(const Eigen::Quaterniond& q);
  Eigen::Quaterniond q_ = Eigen::Quaterniond::Identity();
};

/// The symmetry of a crystal as rotations of its crystal frame (from
/// laue_rotations()), ready for orientation arithmetic.
class CrystalSymmetry {
 public:
  CrystalSymmetry() = default;  ///< triclinic: identity only
  explicit CrystalSymmetry(const std::vector<Eigen::Matrix3d>& laue_rotations);
  static CrystalSymmetry cubic();  ///< the 24 rotations of m-3m

  const std::vector<Rotation>& operators() const { return ops_; }
  size_t size() const { return ops_.size(); }

  /// The symmetric equivalent S g of g with the smallest rotation angle: the
  /// fundamental zone nearest the identity (Rodrigues–Frank). Ties go to the
  /// first operator in order.
  Rotation reduce(const Rotation& g) const;
  /// Smallest angle (radians) of S g_b g_aᵀ over the symmetry: the
  /// misorientation angle of two orientations of this crystal.
  double misorientation_angle(const Rotation& a, const Rotation& b) const;
  /// The misorientation Δ = S g_b g_aᵀ of smallest angle (its axis is in the
  /// crystal frame of a).
  Rotation misorientation(const Rotation& a, const Rotation& b) const;
  /// Symmetric equivalent of g closest to `reference`.
  Rotation nearest_equivalent(const Rotation& g, const Rotation& reference) const;
  /// Mean orientation of a set: each member brought to its equivalent nearest
  /// the running mean, quaternions averaged (sign-aligned) and normalised;
  /// iterated until stable. Throws for an empty set.
  Rotation mean(const std::vector<Rotation>& set) const;

 private:
  std::vector<Rotation> ops_{Rotation()};
};

/// Uniformly distributed random orientations (Shoemake, Graphics Gems III,
/// 1992), deterministic for a seed.
std::vector<Rotation> random_rotations(size_t count, std::uint64_t seed);

}  // namespace orderband
