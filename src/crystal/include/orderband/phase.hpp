// A crystalline phase: unit cell, space group and atom sites, read from CIF.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

namespace orderband {

/// Unit cell with the orthogonalisation used everywhere in orderband:
/// crystal frame x ∥ a, z ∥ c* (normal to the ab plane), y = z × x.
struct UnitCell {
  double a_A = 0, b_A = 0, c_A = 0;  ///< lengths in ångström
  double alpha_deg = 90, beta_deg = 90, gamma_deg = 90;
  Eigen::Matrix3d orth = Eigen::Matrix3d::Identity();  ///< fractional → Cartesian (Å); columns a, b, c

  UnitCell() = default;
  UnitCell(double a, double b, double c, double alpha, double beta, double gamma);

  /// Cartesian reciprocal vector (Å⁻¹, no 2π) of Miller indices h.
  Eigen::Vector3d reciprocal(const Eigen::Vector3d& hkl) const;
  /// Interplanar spacing d_hkl in ångström.
  double d_spacing_A(const Eigen::Vector3i& hkl) const;
  /// Miller indices (real-valued) of a Cartesian reciprocal vector.
  Eigen::Vector3d miller_of(const Eigen::Vector3d& g) const;
};

/// One atom of the unit cell (after symmetry expansion) or of the
/// asymmetric unit (as listed in the CIF).
struct AtomSite {
  std::string label;
  std::string element;             ///< element symbol, e.g. "Ni"
  Eigen::Vector3d fract{0, 0, 0};  ///< fractional coordinates
  double occupancy = 1.0;
  double u_iso_A2 = 0.0;  ///< isotropic displacement U (Å²); B = 8π²U
};

struct Phase {
  std::string name;    ///< data block name or file stem
  std::string source;  ///< file the phase was read from
  UnitCell cell;
  std::string space_group_hm;  ///< Hermann–Mauguin symbol
  int space_group_number = 0;
  std::string laue_class;  ///< Laue class symbol, e.g. "m-3m"
  /// Rotation parts of the space-group operations (fractional basis,
  /// proper and improper), one per distinct point-group operation.
  std::vector<Eigen::Matrix3i> point_group_ops;
  std::vector<AtomSite> asymmetric_sites;
  /// Every atom of the unit cell: each asymmetric site expanded by the space
  /// group, a site on a special position appearing once per distinct image.
  std::vector<AtomSite> unit_cell_sites;
};

}  // namespace orderband
