// Dynamical spheres: Kikuchi band edges at the Bragg angle, the Bloch solution's symmetry, the
// sector's values solved directly and the unfolding's symmetry.
#include "orderband/dynamical_sphere.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "orderband/electron.hpp"
#include "orderband/laue_group.hpp"
#include "orderband/phase_cif.hpp"
#include "orderband/units.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

using test::crystal_data;

/// A cheap beam set for tests that check geometry and symmetry, not convergence.
constexpr BeamSetSpec kCheapBeams{1.2, 16, 80};

double intensity_leaving_along(const BlochWaveSolver& solver, const Phase& phase, const Eigen::Vector3d& u) {
  return backscatter_intensity(solver.solve(-u), phase, {});
}

TEST(DynamicalSphere, KikuchiBandEdgesLieAtTheBraggAngle) {
  // Across the (200) band of nickel at 20 kV, away from zone axes, the intensity is high inside
  // the band and drops at its edges, at ±θ_B from the plane (θ_B = asin(λ / 2d) = 1.397°): the
  // Kikuchi band's defining geometry (Kikuchi, Jpn. J. Phys. 5 (1928) 83; common practice).
  const Phase ni = load_phase_cif(crystal_data("ni-fcc.cif"));
  const BeamSetSpec beams{1.6, 64, 320};
  const CrystalPotential u(ni, 20.0, potential_index_for(ni, beams), {0.1});
  const BlochWaveSolver solver(u, beams);
  const double theta_b = rad_to_deg(bragg_angle_rad(ni.cell.d_spacing_A({2, 0, 0}), electron_wavelength_A(20.0)));
  ASSERT_NEAR(theta_b, 1.397, 0.002);
  const Eigen::Vector3d along = Eigen::Vector3d(0, 0.31, 0.95).normalized(), normal(1, 0, 0);
  const double step = 0.1;
  std::vector<double> phi, value;
  for (double p = 0; p <= 2.6 * theta_b; p += step) {
    phi.push_back(p);
    value.push_back(
        intensity_leaving_along(solver, ni, std::cos(deg_to_rad(p)) * along + std::sin(deg_to_rad(p)) * normal));
  }
  // The steepest fall of the intensity with angle (over 0.2°, which steps over the small jumps
  // where a beam enters or leaves the set) inside [lo, hi] · θ_B.
  auto steepest_fall = [&](double lo, double hi) {
    double steepest = 0, at = 0;
    for (size_t i = 1; i + 1 < phi.size(); ++i)
      if (phi[i] > lo * theta_b && phi[i] < hi * theta_b && value[i - 1] - value[i + 1] > steepest)
        steepest = value[i - 1] - value[i + 1], at = phi[i];
    return at;
  };
  // The (200) band's edge, and the (400) band's edge at its own Bragg angle, ≈ 2 θ_B.
  EXPECT_NEAR(steepest_fall(0.5, 1.6), theta_b, 0.1 * theta_b);
  EXPECT_NEAR(steepest_fall(1.7, 2.5), 2 * theta_b, 0.05 * 2 * theta_b);
  // Inside the band brighter than just outside it, by more than noise: a real band.
  EXPECT_GT(value[0], 1.3 * value[static_cast<size_t>(std::lround(1.5 * theta_b / step))]);
  // Symmetric about the plane: the other side gives the same profile (the crystal has the mirror).
  for (double p : {0.3, 1.2, 2.0}) {
    const double a =
        intensity_leaving_along(solver, ni, std::cos(deg_to_rad(p)) * along + std::sin(deg_to_rad(p)) * normal);
    const double b =
        intensity_leaving_along(solver, ni, std::cos(deg_to_rad(p)) * along - std::sin(deg_to_rad(p)) * normal);
    EXPECT_NEAR(a, b, 1e-9 * a) << p;
  }
}

TEST(DynamicalSphere, BlochIntensityIsInvariantUnderTheLaueGroup) {
  // Solved independently at u and at R u for every rotation of m-3m: the beam sets are images of
  // each other, so the intensities agree to rounding.
  const Phase ni3al = load_phase_cif(crystal_data("ni3al-gamma-prime.cif"));
  const CrystalPotential u(ni3al, 20.0, potential_index_for(ni3al, kCheapBeams), {0.1});
  const BlochWaveSolver solver(u, kCheapBeams);
  const std::vector<Eigen::Matrix3d> rotations = laue_rotations(ni3al);
  ASSERT_EQ(rotations.size(), 24u);
  for (const Eigen::Vector3d& v : {Eigen::Vector3d(0.3, 0.5, 0.81), Eigen::Vector3d(-0.7, 0.2, 0.4)}) {
    const double reference = intensity_leaving_along(solver, ni3al, v.normalized());
    for (const Eigen::Matrix3d& r : rotations)
      EXPECT_NEAR(intensity_leaving_along(solver, ni3al, r * v.normalized()), reference, 1e-8 * reference);
  }
}

TEST(DynamicalSphere, SectorPixelsAreSolvedDirectlyAndTheUnfoldingIsSymmetric) {
  const Phase ni3al = load_phase_cif(crystal_data("ni3al-gamma-prime.cif"));
  DynamicalSphereSpec spec;
  spec.nside = 16;
  spec.beams = kCheapBeams;
  const DynamicalSphere s = dynamical_sphere(ni3al, spec);
  const SphereGrid& grid = s.intensity.grid;
  // The sector and its rim: about 1/48 of the sphere, plus the pixels on its border.
  EXPECT_LT(s.directions_solved, static_cast<size_t>(grid.npix() / 48 * 2.5));
  EXPECT_GT(s.directions_solved, static_cast<size_t>(grid.npix() / 48));
  const CrystalPotential u(ni3al, 20.0, potential_index_for(ni3al, kCheapBeams), spec.absorption);
  const BlochWaveSolver solver(u, kCheapBeams);
  const LaueSector sector(ni3al);
  int inside = 0;
  for (long p = 0; p < grid.npix(); ++p) {
    const Eigen::Vector3d c = grid.centre_of(p);
    if ((sector.canonical(c) - c).norm() > 1e-12) continue;
    ++inside;
    const double direct = intensity_leaving_along(solver, ni3al, c);
    EXPECT_NEAR(s.intensity.value(p), direct, 1e-9 * direct) << p;
  }
  EXPECT_GE(inside, static_cast<int>(grid.npix() / 48 / 2));
  // HEALPix maps pixel centres onto pixel centres under a quarter turn about z and the mirror
  // z → −z, both operations of m-3m: the unfolded values agree there.
  double largest = 0;
  for (long p = 0; p < grid.npix(); ++p) {
    const Eigen::Vector3d c = grid.centre_of(p);
    for (const Eigen::Vector3d& image :
         {Eigen::Vector3d(-c.y(), c.x(), c.z()), Eigen::Vector3d(c.x(), c.y(), -c.z())}) {
      const long q = grid.pixel_of(image);
      ASSERT_LT((grid.centre_of(q) - image).norm(), 1e-9);
      largest = std::max(largest, std::abs(s.intensity.value(q) - s.intensity.value(p)) / s.intensity.value(p));
    }
  }
  EXPECT_LT(largest, 1e-4);
}

}  // namespace
}  // namespace orderband
