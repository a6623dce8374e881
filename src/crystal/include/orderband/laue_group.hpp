// Proper rotations of a phase's Laue group, in the orthonormal crystal frame.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "orderband/phase.hpp"

namespace orderband {

/// The proper rotations of the Laue group (point group plus inversion) as
/// Cartesian matrices acting on crystal-frame vectors. The identity comes
/// first. Cubic m-3m gives 24, hexagonal 6/mmm 12, and so on.
std::vector<Eigen::Matrix3d> laue_rotations(const Phase& phase);

}  // namespace orderband
