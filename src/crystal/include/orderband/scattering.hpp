// Electron scattering factors and kinematic structure factors.
#pragma once

#include <Eigen/Core>
#include <complex>
#include <string>

#include "orderband/phase.hpp"

namespace orderband {

/// True if an electron scattering factor is tabulated for the element symbol.
bool has_electron_scattering_factor(const std::string& element);

/// Electron scattering factor f_e(s) in ångström at s = sin θ / λ (Å⁻¹):
/// the five-Gaussian fit of International Tables Vol. C, Table 4.3.2.2
/// (Peng, Ren, Dudarev & Whelan, Acta Cryst. A52 (1996) 257), valid to
/// s = 2 Å⁻¹. No relativistic factor: it scales every reflection alike.
double electron_scattering_factor_A(const std::string& element, double s_inv_A);

/// Kinematic structure factor in ångström:
///   F(hkl) = Σ_j occ_j f_j(s) exp(−B_j s²) exp(2πi h·x_j),  s = 1/(2 d_hkl),
/// summed over the unit-cell sites (each special-position image once), with
/// the Debye–Waller factor B_j = 8π² U_j from the CIF's isotropic displacement.
std::complex<double> structure_factor_A(const Phase& phase, const Eigen::Vector3i& hkl);

}  // namespace orderband
