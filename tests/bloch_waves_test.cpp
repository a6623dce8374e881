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
#include "orderband/rotation.hpp"
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
  // Two-beam extinction distances at 100 kV, (111), (200) and (220), in nm: Williams & Carter,
  // Transmission Electron Microscopy, 2nd ed. 2009, table of two-beam extinction distances (values
  // from memory, close to those of Hirsch et al. 1965): Al 56.3, 68.5, 114.4; Ni 26.7, 30.6, 44.2;
  // Cu 28.6, 32.8, 48.0; Ag 24.2, 27.8, 39.6. The table used other scattering and Debye–Waller
  // factors, hence 10 % (issue Wave 2 · F asks Al and Cu within 10 %). Measured: Al 57.8, 70.3,
  // 117.4; Ni 26.9, 30.8, 44.7; Cu 30.0, 33.8, 47.9; Ag 24.5, 27.4, 38.9 (within 5 % everywhere).
  // The copper figures remembered earlier, 24.2 and 28.1 nm, are silver's row: our silver gives
  // them within 3 %, and our copper follows from the X-ray factors of International Tables
  // (next test), which no copper at 24 nm could.
  struct Row {
    const char* cif;
    double xi111, xi200, xi220;
  };
  for (const Row& r : {Row{"al-fcc.cif", 56.3, 68.5, 114.4}, Row{"ni-fcc.cif", 26.7, 30.6, 44.2},
                       Row{"cu-fcc.cif", 28.6, 32.8, 48.0}, Row{"ag-fcc.cif", 24.2, 27.8, 39.6}}) {
    const CrystalPotential u(phase_from(r.cif), 100.0, 4, {0.0});
    EXPECT_NEAR(u.extinction_distance_A({1, 1, 1}) / 10, r.xi111, 0.1 * r.xi111) << r.cif;
    EXPECT_NEAR(u.extinction_distance_A({2, 0, 0}) / 10, r.xi200, 0.1 * r.xi200) << r.cif;
    EXPECT_NEAR(u.extinction_distance_A({2, 2, 0}) / 10, r.xi220, 0.1 * r.xi220) << r.cif;
  }
}

TEST(CrystalPotential, ExtinctionDistancesFollowTheXrayFactorsThroughMottBethe) {
  // An independent route to U_g: the Mott–Bethe formula f_e(s) = (m₀e²/(8π ε₀ h²)) (Z − f_x(s)) / s²
  // = 0.023934 Å (Z − f_x) / s² (s in Å⁻¹) applied to the X-ray scattering factors of
  // International Tables Vol. C, Table 6.1.1.4 (the four-Gaussian fits gemmi ships), then
  // ξ_g = π Ω / (γ λ |F_g|) with F_g = 4 f_e exp(−B s²) for these fcc metals.
  for (const char* cif : {"al-fcc.cif", "cu-fcc.cif", "ni-fcc.cif", "ag-fcc.cif"}) {
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

TEST(BlochWaves, WeakPotentialGivesTheFirstOrderSiteDensity) {
  // The kinematic limit. With the potential scaled down 100 × the Bloch solution must agree with
  // first-order perturbation theory: ψ_g(z) = U_g (e^{2πi s_g z} − 1)/(2K s_g) (the Howie–Whelan
  // equations to first order; Hirsch et al. 1965, ch. 10), averaged over the depth distribution
  // w(z) = e^{−z/ℓ}/ℓ to ⟨ψ_g⟩ = (U_g/K) πiℓ/(1 − 2πi s_g ℓ), and the backscattered intensity
  // 1 + 2 Re Σ_g ⟨ψ_g⟩ σ_g, σ_g the sites' Fourier coefficient with their thermal smearing
  // (nickel: one kind of atom, so σ_g = e^{−2π²U|g|²} Σ_sites e^{2πi g·r}/4). The first-order term
  // is odd in s_g: a band's first-order contrast comes from U_g σ_g (∝ f(g)|S_g|² here), not from
  // |F|² as a kinematic band model assumes. Second-order terms are of order πℓ|U_g|/K ≈ 0.1 % of
  // the first here (measured: within 1.2 % of the first-order sum at 32 of 33 directions, 2.4 % at
  // one where the terms cancel); the agreement asked is 1 % of the first-order terms' size.
  const Phase ni = phase_from("ni-fcc.cif");
  // The beam set of the full potential's limits 64 / 320: a beam's strength w = K|s|/|U_g| grows
  // as the potential shrinks, so the limits are scaled with it and the same beams take part.
  const double scale = 1e-3;
  const BeamSetSpec beams{1.6, 64 / scale, 320 / scale};
  const CrystalPotential u(ni, 20.0, potential_index_for(ni, beams), {0.0}, scale);
  const BlochWaveSolver solver(u, beams);
  const DepthSpec depth{100.0};
  const double ell = depth.mean_depth_A;
  auto sigma = [&](const Eigen::Vector3i& hkl, const Eigen::Vector3d& g) {
    std::complex<double> sum = 0;
    for (const AtomSite& site : ni.unit_cell_sites)
      sum += std::polar(std::exp(-2.0 * kPi * kPi * site.u_iso_A2 * g.squaredNorm()),
                        2.0 * kPi * hkl.cast<double>().dot(site.fract));
    return sum / static_cast<double>(ni.unit_cell_sites.size());
  };
  const Eigen::Vector3i hkl(2, 0, 0);
  const Eigen::Vector3d g200 = u.reciprocal(hkl);
  const double K = u.crystal_wavenumber();
  std::vector<Eigen::Vector3d> directions;
  // Across the (200) band edge (s from −3/ℓ to +3/ℓ), and 20 directions anywhere.
  for (double s = -3 / ell; s <= 3 / ell + 1e-12; s += 0.5 / ell)
    directions.push_back(direction_at(g200, s, K, {0, 1, 0.3}));
  for (const Rotation& r : random_rotations(20, 5)) directions.push_back(r.matrix().col(2));
  int checked = 0;
  double largest_first_order = 0;
  for (const Eigen::Vector3d& dir : directions) {
    const BlochWaves w = solver.solve(dir);
    const double dynamical = backscatter_intensity(w, ni, depth) - 1;
    double first_order = 0, size_of_terms = 0;
    for (size_t i = 1; i < w.beams.strong.size(); ++i) {
      const Beam& b = w.beams.strong[i];
      const std::complex<double> mean_psi = u.elastic(b.hkl) / w.wavenumber * kPi * std::complex<double>(0, ell) /
                                            (1.0 - 2.0 * kPi * std::complex<double>(0, ell) * b.excitation_error);
      const double term = 2 * (mean_psi * sigma(b.hkl, b.g)).real();
      first_order += term, size_of_terms += std::abs(term);
    }
    largest_first_order = std::max(largest_first_order, std::abs(first_order));
    // 1 % of the terms' size (their sum cancels in places, so its own size is no scale).
    EXPECT_NEAR(dynamical, first_order, 0.01 * size_of_terms)
        << "direction " << dir.transpose() << ", " << w.beams.strong.size() << " strong beams";
    EXPECT_GE(w.beams.strong.size(), 30u);  // the full potential's beam set at 64 / 320
    ++checked;
  }
  EXPECT_EQ(checked, 33);
  // The first-order term is what is checked: it is not negligible (about 1 % of the intensity at
  // the band edge, a hundredth of the full potential's).
  EXPECT_GT(largest_first_order, 1e-3);
}

}  // namespace
}  // namespace orderband
