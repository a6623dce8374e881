// Funk–Hecke: the Funk–Radon transform of Y_lm is P_l(0) Y_lm (as a great-circle mean); odd l vanish.
#include "orderband/radon.hpp"

#include <gtest/gtest.h>

#include <filesystem>

#include "orderband/npy_io.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

struct Ylm {
  int l, m;
};
const std::vector<Ylm> kModes{{0, 0}, {2, 0}, {2, 1}, {4, 3}, {7, 2}, {16, 5}, {33, 10}, {48, 0}, {64, 17}, {64, 64}};

std::vector<std::vector<double>> healpy_maps(int nside) {
  const std::string dir = test::make_temp_dir("ylm");
  std::string args = "ylm " + std::to_string(nside) + " " + dir + "/y.npy";
  for (const Ylm& y : kModes) args += " " + std::to_string(y.l) + "," + std::to_string(y.m);
  const auto r = test::run_reference_script("healpix_reference.py", args);
  EXPECT_EQ(r.exit_code, 0) << r.err;
  const NpyArray a = read_npy(dir + "/y.npy");
  std::filesystem::remove_all(dir);
  std::vector<std::vector<double>> maps(a.shape[0]);
  for (size_t k = 0; k < a.shape[0]; ++k)
    maps[k].assign(a.values.begin() + k * a.shape[1], a.values.begin() + (k + 1) * a.shape[1]);
  return maps;
}

TEST(FunkRadon, SphericalHarmonicsAreEigenfunctions) {
  // Funk 1913; Helgason, Integral Geometry and Radon Transforms (2011): the great-circle integral of
  // Y_lm is 2π P_l(0) Y_lm, i.e. the great-circle mean is P_l(0) Y_lm (P_2(0) = −1/2, P_4(0) = 3/8 …).
  EXPECT_DOUBLE_EQ(legendre(2, 0.0), -0.5);
  EXPECT_DOUBLE_EQ(legendre(4, 0.0), 0.375);
  EXPECT_NEAR(2 * M_PI * legendre(8, 0.0), 0.546875 * M_PI, 1e-15);  // reference table: 2π P_8(0) = 0.546875 π
  const SphereGrid grid(128);
  const auto maps = healpy_maps(128);
  for (size_t k = 0; k < kModes.size(); ++k) {
    const auto out = funk_radon_sh(grid, maps[k], 128);
    const double expected_factor = legendre(kModes[k].l, 0.0);
    double max_y = 0, max_err = 0;
    for (long p = 0; p < grid.npix(); ++p) {
      max_y = std::max(max_y, std::abs(maps[k][p]));
      max_err = std::max(max_err, std::abs(out[p] - expected_factor * maps[k][p]));
    }
    EXPECT_LT(max_err / max_y, 1e-3) << "l = " << kModes[k].l << ", m = " << kModes[k].m;
    if (kModes[k].l % 2) {
      EXPECT_NEAR(expected_factor, 0.0, 1e-15);
    }
  }
}

TEST(FunkRadon, DirectBandIntegralMatchesFunkHecke) {
  // A band of half-width w: mean = Y_lm(n) · (1/(2 sin w)) ∫_{−sin w}^{sin w} P_l(t) dt (Funk–Hecke).
  const SphereGrid grid(256);
  const auto maps = healpy_maps(256);
  const double w = 3.0 * M_PI / 180;
  std::vector<Eigen::Vector3d> normals;
  for (const Rotation& r : random_rotations(40, 5)) normals.push_back(r.matrix().row(1).transpose());
  for (size_t k = 0; k < kModes.size(); ++k) {
    if (kModes[k].l > 33) continue;
    SphereMap map(grid);
    for (long p = 0; p < grid.npix(); ++p) map.sum[p] = maps[k][p], map.weight[p] = 1;
    const auto band = band_radon_direct(map, normals, w);
    double factor = 0;
    const int steps = 2000;
    for (int s = 0; s < steps; ++s) {
      const double t = -std::sin(w) + (s + 0.5) * 2 * std::sin(w) / steps;
      factor += legendre(kModes[k].l, t) / steps;
    }
    double max_y = 0;
    for (double v : maps[k]) max_y = std::max(max_y, std::abs(v));
    for (size_t i = 0; i < normals.size(); ++i)
      EXPECT_NEAR(band[i].mean, factor * map.at(normals[i]), 0.01 * max_y) << "l = " << kModes[k].l;
  }
}

}  // namespace
}  // namespace orderband
