// Electron scattering factors and kinematic structure factors against hand formulas.
#include "orderband/scattering.hpp"
#include "orderband/phase_cif.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "orderband/error.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

using test::crystal_data;

/// Ni3Al at a = 3.572 Å without displacement, to compare with hand values.
Phase ni3al_static() {
  Phase p = load_phase_cif(crystal_data("ni3al-gamma-prime.cif"));
  for (auto& s : p.unit_cell_sites) s.u_iso_A2 = 0;
  return p;
}

double s_of(const Phase& p, const Eigen::Vector3i& h) { return 0.5 / p.cell.d_spacing_A(h); }

TEST(ScatteringFactor, FiveGaussianValues) {
  // Computed from the coefficients of International Tables Vol. C, Table 4.3.2.2
  // (Peng, Ren, Dudarev & Whelan, Acta Cryst. A52 (1996) 257): f_e(s) = Σ a_i exp(−b_i s²).
  EXPECT_NEAR(electron_scattering_factor_A("Ni", 0.0), 6.562, 2e-3);
  EXPECT_NEAR(electron_scattering_factor_A("Al", 0.0), 5.887, 2e-3);
  EXPECT_NEAR(electron_scattering_factor_A("Co", 0.0), 6.853, 2e-3);
  EXPECT_NEAR(electron_scattering_factor_A("W", 0.0), 12.537, 2e-3);
  EXPECT_NEAR(electron_scattering_factor_A("Ni", 0.25), 2.917, 2e-3);
  EXPECT_NEAR(electron_scattering_factor_A("Al", 0.25), 1.737, 2e-3);
  EXPECT_THROW(electron_scattering_factor_A("Zz", 0.1), Error);
}

TEST(StructureFactor, FccMixedParityVanishes) {
  // fcc, 4 atoms of f: unmixed hkl F = 4f, mixed F = 0 (Cullity & Stock,
  // Elements of X-ray Diffraction, 3rd ed., structure-factor chapter).
  const Phase ni = load_phase_cif(crystal_data("ni-fcc.cif"));
  for (const Eigen::Vector3i& h : {Eigen::Vector3i(1, 0, 0), {1, 1, 0}, {2, 1, 0}, {2, 1, 1}, {3, 2, 1}})
    EXPECT_LT(std::abs(structure_factor_A(ni, h)), 1e-12) << h.transpose();
  for (const Eigen::Vector3i& h : {Eigen::Vector3i(1, 1, 1), {2, 0, 0}, {2, 2, 0}, {3, 1, 1}}) {
    const double s = s_of(ni, h);
    const double expected = 4 * electron_scattering_factor_A("Ni", s) * std::exp(-8 * M_PI * M_PI * 0.005 * s * s);
    EXPECT_NEAR(std::abs(structure_factor_A(ni, h)), expected, 1e-10) << h.transpose();
  }
}

TEST(StructureFactor, L12FundamentalAndSuperlattice) {
  // L1₂ A₃B (B at 000, A at face centres): F_fund = f_B + 3 f_A, F_super = f_B − f_A
  // (Cullity & Stock, 3rd ed., order–disorder chapter). Ni3Al: A = Ni, B = Al.
  const Phase p = ni3al_static();
  for (const Eigen::Vector3i& h : {Eigen::Vector3i(1, 1, 1), {2, 0, 0}, {2, 2, 0}, {3, 1, 1}, {2, 2, 2}}) {
    const double s = s_of(p, h);
    const auto F = structure_factor_A(p, h);
    EXPECT_NEAR(F.real(), electron_scattering_factor_A("Al", s) + 3 * electron_scattering_factor_A("Ni", s), 1e-10);
    EXPECT_NEAR(F.imag(), 0, 1e-10);
  }
  for (const Eigen::Vector3i& h : {Eigen::Vector3i(1, 0, 0), {1, 1, 0}, {2, 1, 0}, {2, 1, 1}, {3, 2, 1}}) {
    const double s = s_of(p, h);
    EXPECT_NEAR(structure_factor_A(p, h).real(),
                electron_scattering_factor_A("Al", s) - electron_scattering_factor_A("Ni", s), 1e-10);
  }
  // Hand values at a = 3.572 Å, Peng factors, no Debye–Waller (computed while planning):
  // |F(100)| = 1.144 Å, F(111) = 10.794 Å.
  EXPECT_NEAR(std::abs(structure_factor_A(p, {1, 0, 0})), 1.144, 2e-3);
  EXPECT_NEAR(std::abs(structure_factor_A(p, {1, 1, 1})), 10.794, 2e-3);
}

TEST(StructureFactor, B2EvenAndOdd) {
  // B2 AB: h+k+l even F = f_A + f_B, odd F = f_A − f_B (Cullity & Stock, 3rd ed.).
  Phase p = load_phase_cif(crystal_data("feal-b2.cif"));
  for (auto& s : p.unit_cell_sites) s.u_iso_A2 = 0;
  for (const Eigen::Vector3i& h :
       {Eigen::Vector3i(1, 0, 0), {1, 1, 1}, {2, 1, 0}, {3, 0, 0}, {1, 1, 0}, {2, 0, 0}, {2, 1, 1}}) {
    const double s = s_of(p, h);
    const double sign = (h.sum() % 2 == 0) ? 1.0 : -1.0;
    EXPECT_NEAR(structure_factor_A(p, h).real(),
                electron_scattering_factor_A("Fe", s) + sign * electron_scattering_factor_A("Al", s), 1e-10)
        << h.transpose();
  }
}

TEST(StructureFactor, DisorderedA2AveragesTheSite) {
  // Random A2 Fe0.5Al0.5: bcc, F = 2 (f_Fe + f_Al)/2 for h+k+l even, 0 for odd.
  Phase p = load_phase_cif(crystal_data("feal-a2.cif"));
  for (auto& s : p.unit_cell_sites) s.u_iso_A2 = 0;
  EXPECT_LT(std::abs(structure_factor_A(p, {1, 0, 0})), 1e-12);
  const double s = s_of(p, {1, 1, 0});
  EXPECT_NEAR(structure_factor_A(p, {1, 1, 0}).real(),
              electron_scattering_factor_A("Fe", s) + electron_scattering_factor_A("Al", s), 1e-10);
}

TEST(StructureFactor, DebyeWallerDamping) {
  // exp(−B s²), B = 8π²U: at U = 0.005 Å² and s = 1/(2 d111) the ratio is analytic.
  const Phase with = load_phase_cif(crystal_data("ni3al-gamma-prime.cif"));
  const Phase without = ni3al_static();
  const double s = s_of(with, {1, 1, 1});
  EXPECT_NEAR(std::abs(structure_factor_A(with, {1, 1, 1})) / std::abs(structure_factor_A(without, {1, 1, 1})),
              std::exp(-8 * M_PI * M_PI * 0.005 * s * s), 1e-12);
}

}  // namespace
}  // namespace orderband
