// Fourier coefficients of a crystal's electrostatic potential, as the dynamical theory takes them.
#pragma once

#include <Eigen/Core>
#include <complex>
#include <vector>

#include "orderband/phase.hpp"

namespace orderband {

/// How the absorptive (imaginary) part of the potential is modelled.
struct AbsorptionSpec {
  /// Proportional model: U′_g = κ U_g for every g, the mean absorption U′_0 = κ U_0 included.
  /// κ ≈ 0.1 is common practice for medium-Z metals at SEM voltages (no source); 0 switches
  /// absorption off (the total flux is then conserved).
  double proportional = 0.1;
};

/// The potential's Fourier coefficients in the units of the scattering equation,
/// U_g = 2 m e V_g / h² (Å⁻², m the relativistic mass), for the reciprocal-lattice vectors of
/// one phase at one accelerating voltage:
///   V_g = h² / (2π m₀ e Ω) · F(−g),   hence   U_g = γ F(−g) / (π Ω),
/// where F is the structure factor in ångström built from the electron scattering factors
/// (Peng, Ren, Dudarev & Whelan, Acta Cryst. A52 (1996) 257) with the CIF's Debye–Waller
/// factors, Ω the cell volume (Å³) and γ = 1 + eV/(m₀c²) the Lorentz factor (Hirsch, Howie,
/// Nicholson, Pashley & Whelan, Electron Microscopy of Thin Crystals, 1965, ch. 8; De Graef,
/// Introduction to Conventional Transmission Electron Microscopy, 2003, ch. 2).
///
/// Coefficients are tabulated for |h|, |k|, |l| ≤ max_index when the object is built (every
/// difference of two beams of a beam set must lie inside); asking outside throws.
class CrystalPotential {
 public:
  /// `potential_scale` multiplies every coefficient, U_0 included: 1 for the crystal; small values
  /// give the weak-potential (kinematic) limit that checks of the dynamical theory compare with.
  CrystalPotential(const Phase& phase, double kilovolts, int max_index, AbsorptionSpec absorption = {},
                   double potential_scale = 1.0);

  /// The elastic coefficient U_g (Å⁻²).
  std::complex<double> elastic(const Eigen::Vector3i& hkl) const { return entry(hkl).elastic; }
  /// The absorptive coefficient U′_g (Å⁻²); the full coefficient is U_g + i U′_g.
  std::complex<double> absorptive(const Eigen::Vector3i& hkl) const { return entry(hkl).absorptive; }
  std::complex<double> total(const Eigen::Vector3i& hkl) const {
    const Entry& e = entry(hkl);
    return e.elastic + std::complex<double>(0, 1) * e.absorptive;
  }

  /// Mean inner potential V_0 in volts (h² F(0) / (2π m₀ e Ω)).
  double mean_inner_potential_V() const;
  /// Vacuum wave number K = 1/λ (Å⁻¹) and the one inside the crystal, √(K² + U_0).
  double vacuum_wavenumber() const { return 1.0 / wavelength_A_; }
  double crystal_wavenumber() const;
  double wavelength_A() const { return wavelength_A_; }
  double kilovolts() const { return kilovolts_; }
  /// Two-beam extinction distance ξ_g = 1/(λ |U_g|) in ångström (infinite where U_g = 0).
  double extinction_distance_A(const Eigen::Vector3i& hkl) const;
  /// The Cartesian reciprocal-lattice vector of hkl (Å⁻¹, no 2π) in the crystal frame.
  Eigen::Vector3d reciprocal(const Eigen::Vector3i& hkl) const;

  const Phase& phase() const { return phase_; }
  int max_index() const { return max_index_; }
  bool covers(const Eigen::Vector3i& hkl) const { return hkl.cwiseAbs().maxCoeff() <= max_index_; }

 private:
  struct Entry {
    std::complex<double> elastic, absorptive;
  };
  const Entry& entry(const Eigen::Vector3i& hkl) const;
  size_t slot(const Eigen::Vector3i& hkl) const;

  Phase phase_;
  double kilovolts_, wavelength_A_;
  int max_index_;
  double potential_scale_ = 1;
  std::vector<Entry> table_;
};

/// The Lorentz factor γ = 1 + eV / (m₀ c²) of electrons accelerated through `kilovolts`.
double lorentz_factor(double kilovolts);

}  // namespace orderband
