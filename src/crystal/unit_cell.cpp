// Unit-cell orthogonalisation and reciprocal-space geometry.
#include <cmath>

#include <Eigen/Dense>

#include "orderband/error.hpp"
#include "orderband/phase.hpp"
#include "orderband/units.hpp"

namespace orderband {

UnitCell::UnitCell(double a, double b, double c, double alpha, double beta, double gamma)
    : a_A(a), b_A(b), c_A(c), alpha_deg(alpha), beta_deg(beta), gamma_deg(gamma) {
  if (!(a > 0 && b > 0 && c > 0)) fail("unit cell lengths must be positive, got ", a, ", ", b, ", ", c, " Å");
  const double ca = std::cos(deg_to_rad(alpha)), cb = std::cos(deg_to_rad(beta));
  const double cg = std::cos(deg_to_rad(gamma)), sg = std::sin(deg_to_rad(gamma));
  const double volume_factor = 1 - ca * ca - cb * cb - cg * cg + 2 * ca * cb * cg;
  if (!(volume_factor > 0)) fail("unit cell angles ", alpha, ", ", beta, ", ", gamma, "° do not form a cell");
  // x ∥ a, y in the ab plane, z ∥ c* (the convention of International Tables
  // Vol. B, section 3.3.1, and of most crystallographic software).
  orth << a, b * cg, c * cb, 0, b * sg, c * (ca - cb * cg) / sg, 0, 0, c * std::sqrt(volume_factor) / sg;
}

Eigen::Vector3d UnitCell::reciprocal(const Eigen::Vector3d& hkl) const {
  // Reciprocal basis vectors are the rows of orth⁻¹, so g = orth⁻ᵀ h.
  return orth.inverse().transpose() * hkl;
}

double UnitCell::d_spacing_A(const Eigen::Vector3i& hkl) const {
  const double g = reciprocal(hkl.cast<double>()).norm();
  if (g == 0) fail("d-spacing of (000) is undefined");
  return 1.0 / g;
}

Eigen::Vector3d UnitCell::miller_of(const Eigen::Vector3d& g) const { return orth.transpose() * g; }

}  // namespace orderband
