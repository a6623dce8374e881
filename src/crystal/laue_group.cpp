// Proper rotations of the Laue group in the Cartesian crystal frame.
#include "orderband/laue_group.hpp"

#include <Eigen/Dense>

#include "orderband/error.hpp"

namespace orderband {

std::vector<Eigen::Matrix3d> laue_rotations(const Phase& phase) {
  const Eigen::Matrix3d& orth = phase.cell.orth;
  const Eigen::Matrix3d frac = orth.inverse();
  std::vector<Eigen::Matrix3d> rotations{Eigen::Matrix3d::Identity()};
  for (const Eigen::Matrix3i& op : phase.point_group_ops) {
    Eigen::Matrix3d r = orth * op.cast<double>() * frac;
    if (r.determinant() < 0) r = -r;  // Laue group: every improper op times inversion
    if ((r * r.transpose() - Eigen::Matrix3d::Identity()).norm() > 1e-6)
      fail(phase.source, ": symmetry operation is not orthogonal in the given cell (cell and space group disagree)");
    bool seen = false;
    for (const auto& q : rotations) seen = seen || (q - r).norm() < 1e-6;
    if (!seen) rotations.push_back(r);
  }
  return rotations;
}

}  // namespace orderband
