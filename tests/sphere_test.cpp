// HEALPix grid against healpy; back-projection and mean spheres against the kinematic model.
#include "orderband/sphere.hpp"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>

#include "orderband/band_model.hpp"
#include "orderband/error.hpp"
#include "orderband/laue_group.hpp"
#include "orderband/pair_catalog.hpp"
#include "orderband/preprocess.hpp"
#include "orderband/synth.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

TEST(SphereGrid, PixelsAndCentresEqualHealpy) {
  const std::string dir = test::make_temp_dir("hpx");
  std::vector<Eigen::Vector3d> dirs;
  for (const Rotation& r : random_rotations(500, 77)) dirs.push_back(r.matrix().row(0).transpose());
  dirs.push_back({0, 0, 1}), dirs.push_back({0, 0, -1}), dirs.push_back({1, 0, 0});
  {
    std::ofstream f(dir + "/v.txt");
    f.precision(17);
    for (const auto& v : dirs) f << v.x() << ' ' << v.y() << ' ' << v.z() << '\n';
  }
  for (int nside : {64, 1024}) {
    const SphereGrid grid(nside);
    const auto r =
        test::run_reference_script("healpix_reference.py", "pixels " + std::to_string(nside) + " " + dir + "/v.txt");
    ASSERT_EQ(r.exit_code, 0) << r.err;
    std::istringstream in(r.out);
    std::ofstream pix(dir + "/p.txt");
    for (const auto& v : dirs) {
      long expected;
      in >> expected;
      EXPECT_EQ(grid.pixel_of(v), expected);
      pix << grid.pixel_of(v) << '\n';
    }
    pix.close();
    const auto c =
        test::run_reference_script("healpix_reference.py", "centres " + std::to_string(nside) + " " + dir + "/p.txt");
    ASSERT_EQ(c.exit_code, 0) << c.err;
    std::istringstream cin(c.out);
    for (const auto& v : dirs) {
      Eigen::Vector3d e;
      cin >> e.x() >> e.y() >> e.z();
      EXPECT_NEAR((grid.centre_of(grid.pixel_of(v)) - e).norm(), 0, 1e-12);
    }
  }
  std::filesystem::remove_all(dir);
}

TEST(SphereGrid, InterpolationWeightsEqualHealpy) {
  // The bilinear weights the dynamical spheres are unfolded and rendered with, against healpy's
  // get_interp_weights (the same HEALPix C++ routine behind both; pixels as a set, weights by pixel).
  const std::string dir = test::make_temp_dir("hpx-interp");
  std::vector<Eigen::Vector3d> dirs;
  for (const Rotation& r : random_rotations(300, 78)) dirs.push_back(r.matrix().row(2).transpose());
  {
    std::ofstream f(dir + "/v.txt");
    f.precision(17);
    for (const auto& v : dirs) f << v.x() << ' ' << v.y() << ' ' << v.z() << '\n';
  }
  const int nside = 32;
  const SphereGrid grid(nside);
  const auto r = test::run_reference_script("healpix_reference.py", "interp 32 " + dir + "/v.txt");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::istringstream in(r.out);
  for (const auto& v : dirs) {
    long expected_pixel[4];
    double expected_weight[4];
    for (long& p : expected_pixel) in >> p;
    for (double& w : expected_weight) in >> w;
    long pixel[4];
    double weight[4];
    grid.interpolation(v, pixel, weight);
    double sum = 0;
    for (int i = 0; i < 4; ++i) {
      sum += weight[i];
      double theirs = 0;
      for (int j = 0; j < 4; ++j)
        if (expected_pixel[j] == pixel[i]) theirs += expected_weight[j];
      EXPECT_NEAR(weight[i], theirs, 1e-9) << v.transpose();
    }
    EXPECT_NEAR(sum, 1.0, 1e-12);
  }
  std::filesystem::remove_all(dir);
}

TEST(SphereGrid, EqualPixelAreasAndResolution) {
  // Górski et al., ApJ 622 (2005) 759: every pixel has area 4π/(12 nside²); nominal resolution
  // sqrt(π/3)/nside: nside 128 → 27.483891 arcmin, nside 256 → 0.00399737 rad.
  EXPECT_NEAR(SphereGrid(128).resolution_rad() * 180 / M_PI * 60, 27.483891, 1e-5);
  EXPECT_NEAR(SphereGrid(256).resolution_rad(), 0.00399737, 1e-8);
  EXPECT_DOUBLE_EQ(SphereGrid(16).pixel_area_sr(), 4 * M_PI / (12 * 256));
  // Equal areas: uniformly random directions fall into pixels in equal numbers (chi-square).
  const SphereGrid g(2);
  std::vector<int> counts(g.npix(), 0);
  const int n = 48000;
  for (const Rotation& r : random_rotations(n, 3)) counts[g.pixel_of(r.matrix().row(2).transpose())]++;
  double chi2 = 0;
  const double expected = double(n) / g.npix();
  for (int c : counts) chi2 += (c - expected) * (c - expected) / expected;
  EXPECT_LT(chi2, 85.4);                        // 47 degrees of freedom, p = 0.0005
  EXPECT_EQ(SphereGrid::nside_for(0.01), 128);  // 0.0080 rad ≤ 0.01 < 0.016
  EXPECT_THROW(SphereGrid(100), Error);
}

TEST(MeanSphere, ManyRandomPatternsRebuildTheModelSphere) {
  // 2,000 noisy synthetic patterns (pure γ, random orientations, 5,000 counts per pixel) are
  // flat-fielded by the scan mean, back-projected into the crystal frame and folded by m-3m;
  // the result must correlate with the kinematic model's own sphere at r > 0.95.
  const OrderingPair pair = load_named_pair("ni");
  const BandModelParams params;
  const KinematicBandModel model(pair.disordered, 20, params);
  DetectorGeometrySpec spec;
  spec.width_px = spec.height_px = 48;
  spec.pc_px = {24, 15};
  spec.distance_px = 36;
  const DetectorGeometry geo(spec);
  const PatternRenderer renderer(geo, model, model, 5000, 0.5);
  const int n = 2000;
  const auto orientations = random_rotations(n, 8);
  std::vector<std::vector<float>> patterns(n, std::vector<float>(48 * 48));
#pragma omp parallel for schedule(dynamic)
  for (int k = 0; k < n; ++k) {
    std::vector<std::uint16_t> raw(48 * 48);
    renderer.render({{orientations[k], false, 1.0, 0}}, geo, 1000 + k, SampleType::uint16, 1.0, raw.data());
    for (int q = 0; q < 48 * 48; ++q) patterns[k][q] = raw[q];
  }
  std::vector<float> mean(48 * 48, 0.0f);
  for (const auto& p : patterns)
    for (int q = 0; q < 48 * 48; ++q) mean[q] += p[q] / n;
  PreprocessSpec pre_spec;
  pre_spec.static_background = StaticBackgroundKind::file;  // the scan mean, given directly
  pre_spec.dynamic_background_sigma_px = 0;
  const Preprocessor pre(pre_spec, 48, 48, mean);
  const DetectorRays rays(geo);
  SphereMap sphere{SphereGrid(32)};
  for (int k = 0; k < n; ++k) {
    ASSERT_TRUE(pre.apply(patterns[k].data()));
    back_project(patterns[k].data(), pre.mask(), rays, orientations[k], sphere);
  }
  const SphereMap folded = fold_by_symmetry(sphere, CrystalSymmetry(laue_rotations(pair.disordered)));
  EXPECT_GT(folded.coverage(), 0.999);
  double sx = 0, sy = 0, sxx = 0, syy = 0, sxy = 0;
  long m = 0;
  for (long p = 0; p < folded.grid.npix(); ++p) {
    if (folded.weight[p] <= 0) continue;
    const double x = folded.value(p), y = model.intensity(Eigen::Vector3d(folded.grid.centre_of(p)));
    sx += x, sy += y, sxx += x * x, syy += y * y, sxy += x * y, ++m;
  }
  const double r = (sxy / m - sx / m * sy / m) / std::sqrt((sxx / m - sx * sx / m / m) * (syy / m - sy * sy / m / m));
  EXPECT_GT(r, 0.95);
  // The stereographic image is drawn and covers the disc.
  const RgbImage img = stereographic_image(folded, 64);
  int white = 0;
  for (size_t q = 0; q < img.rgb.size(); q += 3)
    white += img.rgb[q] == 255 && img.rgb[q + 1] == 255 && img.rgb[q + 2] == 255;
  EXPECT_NEAR(white, 64 * 64 * (1 - M_PI / 4), 64);  // only the corners outside the disc
}

}  // namespace
}  // namespace orderband
