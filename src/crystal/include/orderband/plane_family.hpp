// Plane families {hkl}: symmetric equivalents, multiplicity, d-spacing.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

#include "orderband/frames.hpp"
#include "orderband/phase.hpp"

namespace orderband {

/// One family of lattice planes under the Laue group. A plane and its
/// opposite (hkl and −h−k−l) are the same plane and counted once, so the
/// multiplicity of cubic {100} is 3, {110} 6, {111} 4.
struct PlaneFamily {
  Eigen::Vector3i hkl{0, 0, 0};           ///< representative: lexicographically largest member
  int multiplicity = 0;                   ///< number of distinct planes (±hkl once)
  double d_A = 0;                         ///< interplanar spacing (Å)
  std::vector<Eigen::Vector3i> members;   ///< one index triple per plane
  std::vector<CrystalDirection> normals;  ///< unit plane normals, same order

  /// "{210}" style label; negative indices as "-1".
  std::string label() const;
};

/// All families with d ≥ d_min_A, sorted by decreasing d (then by label).
/// Families are enumerated from the lattice alone: extinction by the
/// structure factor is decided by the caller.
std::vector<PlaneFamily> enumerate_plane_families(const Phase& phase, double d_min_A);

/// "{hkl}" or "(hkl)" text for index triples.
std::string miller_label(const Eigen::Vector3i& hkl, char open = '{', char close = '}');

}  // namespace orderband
