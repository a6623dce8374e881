// Fourier coefficients of the crystal potential from the electron scattering factors.
#include "orderband/crystal_potential.hpp"

#include <cmath>

#include <Eigen/Dense>

#include "orderband/electron.hpp"
#include "orderband/error.hpp"
#include "orderband/scattering.hpp"
#include "orderband/units.hpp"

namespace orderband {

namespace {

/// h² / (2π m₀ e) in V Å²: V_g = this · F_g / Ω with F in Å and Ω in Å³ (about 47.88 V Å²).
double potential_constant_V_A2() {
  using namespace codata;
  return planck_J_s * planck_J_s / (2 * kPi * electron_mass_kg * elementary_charge_C) * 1e20;
}

/// F(000) in ångström: the forward scattering factors of the cell's atoms (no Debye–Waller loss).
double forward_structure_factor_A(const Phase& phase) {
  double f = 0;
  for (const AtomSite& site : phase.unit_cell_sites)
    f += site.occupancy * electron_scattering_factor_A(site.element, 0.0);
  return f;
}

double cell_volume_A3(const Phase& phase) { return phase.cell.orth.determinant(); }

}  // namespace

double lorentz_factor(double kilovolts) {
  using namespace codata;
  return 1.0 + elementary_charge_C * kilovolts * 1e3 / (electron_mass_kg * speed_of_light_m_s * speed_of_light_m_s);
}

CrystalPotential::CrystalPotential(const Phase& phase, double kilovolts, int max_index, AbsorptionSpec absorption,
                                   double potential_scale)
    : phase_(phase),
      kilovolts_(kilovolts),
      wavelength_A_(electron_wavelength_A(kilovolts)),
      max_index_(max_index),
      potential_scale_(potential_scale) {
  if (!(potential_scale > 0 && potential_scale <= 1))
    fail("the potential's scale must lie in (0, 1], got ", potential_scale);
  if (max_index < 1 || max_index > 40)
    fail("potential table: the largest Miller index must be 1 to 40, got ", max_index);
  if (!(absorption.proportional >= 0 && absorption.proportional < 1))
    fail("proportional absorption κ must lie in [0, 1), got ", absorption.proportional);
  if (phase.unit_cell_sites.empty()) fail("phase '", phase.name, "' has no atoms: no potential");
  const double scale = potential_scale * lorentz_factor(kilovolts) / (kPi * cell_volume_A3(phase));
  const int side = 2 * max_index + 1;
  table_.resize(static_cast<size_t>(side) * side * side);
  for (int h = -max_index; h <= max_index; ++h)
    for (int k = -max_index; k <= max_index; ++k)
      for (int l = -max_index; l <= max_index; ++l) {
        const Eigen::Vector3i g(h, k, l);
        // U_g takes F(−g): V(r) = Σ V_g exp(2πi g·r) and F sums exp(+2πi g·x) over the atoms.
        const std::complex<double> F =
            g.isZero() ? std::complex<double>(forward_structure_factor_A(phase), 0) : structure_factor_A(phase, -g);
        Entry& e = table_[slot(g)];
        e.elastic = scale * F;
        e.absorptive = absorption.proportional * e.elastic;
      }
}

size_t CrystalPotential::slot(const Eigen::Vector3i& hkl) const {
  const int side = 2 * max_index_ + 1;
  return (static_cast<size_t>(hkl[0] + max_index_) * side + (hkl[1] + max_index_)) * side + (hkl[2] + max_index_);
}

const CrystalPotential::Entry& CrystalPotential::entry(const Eigen::Vector3i& hkl) const {
  if (!covers(hkl))
    fail("potential coefficient (", hkl[0], " ", hkl[1], " ", hkl[2], ") lies outside the table (largest index ",
         max_index_, ")");
  return table_[slot(hkl)];
}

double CrystalPotential::mean_inner_potential_V() const {
  return potential_scale_ * potential_constant_V_A2() * forward_structure_factor_A(phase_) / cell_volume_A3(phase_);
}

double CrystalPotential::crystal_wavenumber() const {
  const double k = vacuum_wavenumber();
  return std::sqrt(k * k + elastic(Eigen::Vector3i::Zero()).real());
}

double CrystalPotential::extinction_distance_A(const Eigen::Vector3i& hkl) const {
  const double u = std::abs(elastic(hkl));
  return u > 0 ? 1.0 / (wavelength_A_ * u) : std::numeric_limits<double>::infinity();
}

Eigen::Vector3d CrystalPotential::reciprocal(const Eigen::Vector3i& hkl) const {
  return phase_.cell.reciprocal(hkl.cast<double>());
}

}  // namespace orderband
