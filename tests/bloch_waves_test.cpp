// Crystal potential and Bloch waves against the two-beam theory, flux conservation, tabulated
// extinction distances and the crystal's symmetry.
#include "orderband/bloch_waves.hpp"

#include <gtest/gtest.h>

#include <gemmi/elem.hpp>
#include <gemmi/it92.hpp>

#include <cmath>

#include "orderband/crystal_potential.hpp"
#include "orderband/electron.hpp"
#include "orderband/error.hpp"
#include "orderband/laue_group.hpp"
#include "orderband/phase_cif.hpp"
#include "orderband/scattering.hpp"
#include "orderband/units.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

using test::crystal_data;

Phase phase_from(const std::string& file) { return load_phase_cif(crystal_data(file)); }

/// A direction at excitation error s for reflection g: u = −sin θ ĝ + cos θ t, t ⊥ g, with
/// sin θ chosen so that s_g = −(2K u·g + g²)/(2K) = s.
Eigen::Vector3d direction_at(const Eigen::Vector3d& g, double s, double K, const Eigen::Vector3d& t) {
  const double sin_theta = (g.squaredNorm() + 2 * K * s) / (2 * K * g.norm());
  const Eigen::Vector3d perp = (t - t.dot(g.normalized()) * g.normalized()).normalized();
  return -sin_theta * g.normalized() + std::sqrt(1 - sin_theta * sin_theta) * perp;
}

TEST(CrystalPotential, ExtinctionDistancesAgreeWithTables) {
  // Two-beam extinction distances of aluminium at 100 kV: (111) 56.3 nm, (200) 68.5 nm (Williams &
  // Carter, Transmission Electron Microscopy, 2nd ed. 2009, table of two-beam extinction
  // distances; values from memory, close to those of Hirsch et al. 1965). The table used other
  // scattering and Debye–Waller factors, hence 10 %. (The copper values remembered from the same
  // table, 24.2 and 28.1 nm, are 19 % shorter than ours; the next test shows that ours follow
  // from the X-ray factors of International Tables through the Mott–Bethe formula, so the
  // remembered copper values are not used.)
  const CrystalPotential al(phase_from("al-fcc.cif"), 100.0, 4, {0.0});
  EXPECT_NEAR(al.extinction_distance_A({1, 1, 1}) / 10, 56.3, 5.6);
  EXPECT_NEAR(al.extinction_distance_A({2, 0, 0}) / 10, 68.5, 6.9);
}

TEST(CrystalPotential, ExtinctionDistancesFollowTheXrayFactorsThroughMottBethe) {
  // An independent route to U_g: the Mott–Bethe formula f_e(s) = (m₀e²/(8π ε₀ h²)) (Z − f_x(s)) / s²
  // = 0.023934 Å (Z − f_x) / s² (s in Å⁻¹) applied to the X-ray scattering factors of
  // International Tables Vol. C, Table 6.1.1.4 (the four-Gaussian fits gemmi ships), then
  // ξ_g = π Ω / (γ λ |F_g|) with F_g = 4 f_e exp(−B s²) for these fcc metals.
  for (const char* cif : {"al-fcc.cif", "cu-fcc.cif", "ni-fcc.cif"}) {
    const Phase p = phase_from(cif);
    const CrystalPotential u(p, 100.0, 4, {0.0});
    const AtomSite& atom = p.unit_cell_sites[0];
    const gemmi::Element el(atom.element);
    for (const Eigen::Vector3i& h : {Eigen::Vector3i(1, 1, 1), {2, 0, 0}, {2, 2, 0}}) {
      const double s = 0.5 / p.cell.d_spacing_A(h);
      const double fx = gemmi::IT92<double>::get(el.elem).calculate_sf(s * s);
      const double fe = 0.023934 * (el.atomic_number() - fx) / (s * s);
      const double F = 4 * fe * std::exp(-8 * kPi * kPi * atom.u_iso_A2 * s * s);
      const double omega = std::pow(p.cell.a_A, 3);
      const double xi = kPi * omega / (lorentz_factor(100.0) * electron_wavelength_A(100.0) * F);
      EXPECT_NEAR(u.extinction_distance_A(h), xi, 0.01 * xi) << cif << " " << h.transpose();
    }
  }
}

TEST(CrystalPotential, CoefficientsFollowTheStructureFactorAndAreHermitian) {
  const Phase ni3al = phase_from("ni3al-gamma-prime.cif");
  const CrystalPotential u(ni3al, 20.0, 4, {0.1});
  const double omega = std::pow(ni3al.cell.a_A, 3);
  // U_g = γ F(−g) / (π Ω), γ = 1 + 20 keV / 511 keV (electron rest energy 510.999 keV).
  const double gamma = 1 + 20.0 / 510.999;
  for (const Eigen::Vector3i& h : {Eigen::Vector3i(1, 0, 0), {1, 1, 1}, {2, 1, 0}, {3, 1, 1}}) {
    const double expected = gamma * std::abs(structure_factor_A(ni3al, h)) / (kPi * omega);
    EXPECT_NEAR(std::abs(u.elastic(h)), expected, 1e-8 * expected);
    EXPECT_NEAR(std::abs(u.elastic(-h) - std::conj(u.elastic(h))), 0, 1e-15);
    EXPECT_NEAR(std::abs(u.absorptive(h) - 0.1 * u.elastic(h)), 0, 1e-15);
  }
  EXPECT_THROW(u.elastic({5, 0, 0}), Error);
}

TEST(BlochWaves, TwoBeamSolutionIsThePendelloesung) {
  // One reflection without absorption: |ψ_g(z)|² = sin²(π z s_eff) / (ξ_g s_eff)², s_eff =
  // √(s² + ξ_g⁻²), ξ_g = K/|U_g| (Hirsch et al. 1965, ch. 8, the two-beam dynamical theory).
  const Phase ni = phase_from("ni-fcc.cif");
  const CrystalPotential u(ni, 20.0, potential_index_for(ni, {}), {0.0});
  const BlochWaveSolver solver(u, {});
  const Eigen::Vector3i hkl(2, 0, 0);
  const Eigen::Vector3d g = u.reciprocal(hkl);
  const double K = u.crystal_wavenumber(), xi = K / std::abs(u.elastic(hkl));
  for (double s : {0.0, 0.3 / xi, -1.0 / xi, 2.5 / xi}) {
    const Eigen::Vector3d dir = direction_at(g, s, K, {0, 1, 0.3});
    BeamSet two;
    two.strong = {Beam{}, Beam{hkl, g, 0}};
    const BlochWaves w = solver.solve(dir, two);
    EXPECT_NEAR(w.beams.strong[1].excitation_error, s, 1e-12);
    const double s_eff = std::sqrt(s * s + 1 / (xi * xi));
    for (double z = 0; z <= 2000; z += 50) {
      const Eigen::VectorXcd psi = w.amplitudes(z);
      const double expected = std::pow(std::sin(kPi * z * s_eff) / (xi * s_eff), 2);
      EXPECT_NEAR(std::norm(psi[1]), expected, 1e-6) << "s ξ = " << s * xi << ", z = " << z;
      EXPECT_NEAR(std::norm(psi[0]), 1 - expected, 1e-6);
    }
  }
}

TEST(BlochWaves, ManyBeamsConserveTheFluxWithoutAbsorptionAndLoseItWith) {
  const Phase ni = phase_from("ni-fcc.cif");
  const int index = potential_index_for(ni, {});
  const CrystalPotential elastic_only(ni, 20.0, index, {0.0}), absorbing(ni, 20.0, index, {0.1});
  // Near the [001] zone axis many beams are excited at once; a generous beam set.
  const Eigen::Vector3d dir = Eigen::Vector3d(0.02, 0.01, 1).normalized();
  const BeamSetSpec many{1.6, 40, 80};
  const BlochWaves w = BlochWaveSolver(elastic_only, many).solve(dir);
  ASSERT_GE(w.beams.strong.size(), 25u);
  double previous = 1;
  const BlochWaves wa = BlochWaveSolver(absorbing, many).solve(dir);
  for (double z = 0; z <= 1000; z += 25) {
    EXPECT_NEAR(w.amplitudes(z).squaredNorm(), 1.0, 1e-10) << z;
    const double flux = wa.amplitudes(z).squaredNorm();
    EXPECT_LE(flux, previous + 1e-12) << z;
    previous = flux;
  }
  EXPECT_LT(previous, 0.9);
}

}  // namespace
}  // namespace orderband
