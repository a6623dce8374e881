// The orientation stage's parts one by one, on inputs made here without the project's band model:
// band detection on straight stripes, indexing of exact plane normals, refinement on a pattern
// drawn with flat, sharp-edged bands of other weights than the model's.
#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "orderband/band_detect.hpp"
#include "orderband/band_model.hpp"
#include "orderband/detector_geometry.hpp"
#include "orderband/indexing.hpp"
#include "orderband/phase_cif.hpp"
#include "orderband/refine.hpp"
#include "orderband/rotation.hpp"
#include "orderband/sphere.hpp"
#include "orderband/units.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

constexpr double kNiLatticeA = 3.524;  // fcc Ni at room temperature (common practice, from memory)

DetectorGeometrySpec screen_60() {
  DetectorGeometrySpec g;
  g.width_px = 60, g.height_px = 60, g.pc_px = {30.0, 18.0}, g.distance_px = 45.0;
  return g;
}

/// Every plane normal (unit, one sense) of the cubic families {h k l} given.
std::vector<Eigen::Vector3d> cubic_normals(const std::vector<Eigen::Vector3i>& families) {
  std::vector<Eigen::Vector3d> out;
  for (const Eigen::Vector3i& f : families) {
    std::array<int, 3> p{f[0], f[1], f[2]};
    std::sort(p.begin(), p.end());
    do {
      for (int s = 0; s < 8; ++s) {
        const Eigen::Vector3d v((s & 1 ? -1 : 1) * p[0], (s & 2 ? -1 : 1) * p[1], (s & 4 ? -1 : 1) * p[2]);
        const Eigen::Vector3d n = v.normalized();
        const bool seen = std::any_of(
            out.begin(), out.end(), [&](const Eigen::Vector3d& m) { return std::abs(std::abs(m.dot(n)) - 1) < 1e-12; });
        if (!seen) out.push_back(n);
      }
    } while (std::next_permutation(p.begin(), p.end()));
  }
  return out;
}

double angle_between_planes_deg(const Eigen::Vector3d& a, const Eigen::Vector3d& b) {
  return rad_to_deg(std::acos(std::min(1.0, std::abs(a.normalized().dot(b.normalized())))));
}

TEST(BandDetection, FindsTheNormalsOfStraightStripesDrawnOnTheScreen) {
  // Two Gaussian stripes along the screen traces of two planes (sample frame), on a flat
  // background with 1 % noise: the detector must return both normals within 0.7°.
  const DetectorGeometry geometry(screen_60());
  // Each plane spans the rays through two screen points, so its trace is the line through them.
  auto plane_through = [&](PixelPoint a, PixelPoint b) {
    return geometry.direction_sample(a).vec().cross(geometry.direction_sample(b).vec()).normalized();
  };
  const Eigen::Vector3d n1 = plane_through({5, 12}, {55, 40}), n2 = plane_through({12, 55}, {48, 4});
  std::vector<float> pattern(60 * 60);
  std::mt19937 rng(5);
  std::normal_distribution<double> noise(0.0, 0.01);
  const double width = deg_to_rad(1.0);
  for (int i = 0; i < 60; ++i)
    for (int j = 0; j < 60; ++j) {
      const Eigen::Vector3d d = geometry.pixel_direction(j, i).vec();
      const double a1 = std::asin(n1.dot(d)) / width, a2 = std::asin(n2.dot(d)) / width;
      pattern[i * 60 + j] =
          static_cast<float>(1 + 0.2 * std::exp(-0.5 * a1 * a1) + 0.15 * std::exp(-0.5 * a2 * a2) + noise(rng));
    }
  const BandDetector detector(geometry, {});
  const std::vector<DetectedBand> bands = detector.detect(pattern.data());
  ASSERT_GE(bands.size(), 2u);
  // The strongest two are the drawn ones, strongest first.
  EXPECT_LT(angle_between_planes_deg(bands[0].normal.vec(), n1), 0.7);
  EXPECT_LT(angle_between_planes_deg(bands[1].normal.vec(), n2), 0.7);
  EXPECT_GT(bands[0].strength, bands[1].strength);
}

TEST(Indexing, RecoversAnOrientationFromExactNormalsWithNoiseAndASpuriousBand) {
  const Phase ni = load_phase_cif(test::crystal_data("ni-gamma.cif"));
  const Indexer indexer(ni, 20.0);
  const Rotation truth = Rotation::from_bunge(deg_to_rad(35), deg_to_rad(28), deg_to_rad(61));
  // Eight planes of {111}, {200}, {220}, {311} as detected bands: sample normal = gᵀ n, each
  // tilted by 0.3° about a random axis; then one band that belongs to no plane.
  const std::vector<Eigen::Vector3d> normals = cubic_normals({{1, 1, 1}, {2, 0, 0}, {2, 2, 0}, {3, 1, 1}});
  std::mt19937 rng(7);
  std::normal_distribution<double> gauss;
  std::vector<DetectedBand> bands;
  for (size_t k : {0u, 1u, 4u, 5u, 7u, 10u, 13u, 20u}) {
    const Eigen::Vector3d axis(gauss(rng), gauss(rng), gauss(rng));
    const Eigen::Vector3d n =
        Eigen::AngleAxisd(deg_to_rad(0.3), axis.normalized()) * (truth.matrix().transpose() * normals[k]);
    bands.push_back({SampleDirection(n), 1.0 - 0.05 * bands.size(), 0, 0});
  }
  bands.push_back({SampleDirection(Eigen::Vector3d(0.61, -0.23, 0.77)), 0.5, 0, 0});
  const std::optional<IndexingResult> r = indexer.index(bands);
  ASSERT_TRUE(r.has_value());
  EXPECT_EQ(r->bands_detected, 9);
  EXPECT_EQ(r->bands_matched, 8);
  EXPECT_LT(rad_to_deg(CrystalSymmetry::cubic().misorientation_angle(r->orientation, truth)), 0.4);
  EXPECT_LT(r->fit_residual_deg, 0.6);
  // Two bands cannot be indexed (a third must confirm a pair's proposal).
  EXPECT_FALSE(indexer.index({bands[0], bands[1]}).has_value());
}

TEST(Refinement, ConvergesOnAPatternWithBandsOfAnotherShapeAndWeights) {
  // The pattern: flat bands of full width 2θ_B with sharp (Fermi-function) edges, weights falling
  // with the family as the refiner's model does not assume, on a background sloping down the
  // screen, with 1 % noise. Started 1.2° away, the refinement must end within 0.15° of the truth
  // (measured 0.095°: the model's smooth profile and flat background against these bands).
  const Phase ni = load_phase_cif(test::crystal_data("ni-gamma.cif"));
  const KinematicBandModel model(ni, 20.0, BandModelParams{});
  const DetectorGeometry geometry(screen_60());
  const DetectorRays rays(geometry);
  const Rotation truth = Rotation::from_bunge(deg_to_rad(120), deg_to_rad(40), deg_to_rad(15));
  const double lambda = 0.0859;  // Å at 20 kV (relativistic; common practice, from memory)
  struct Family {
    Eigen::Vector3i hkl;
    double weight;
  };
  const std::vector<Family> families{{{1, 1, 1}, 0.10}, {{2, 0, 0}, 0.09}, {{2, 2, 0}, 0.07}, {{3, 1, 1}, 0.06}};
  std::vector<float> pattern(rays.direction.size());
  std::mt19937 rng(3);
  std::normal_distribution<double> noise(0.0, 0.01);
  for (size_t q = 0; q < rays.direction.size(); ++q) {
    const Eigen::Vector3d c = truth.matrix() * rays.direction[q];
    double v = 1.0 - 0.2 * (static_cast<double>(q / 60) / 60.0);
    for (const Family& f : families) {
      const double theta = std::asin(lambda / (2 * kNiLatticeA / f.hkl.cast<double>().norm()));
      for (const Eigen::Vector3d& n : cubic_normals({f.hkl})) {
        const double alpha = std::abs(std::asin(n.dot(c)));
        v += f.weight / (1 + std::exp((alpha - theta) / (0.05 * theta)));
      }
    }
    pattern[q] = static_cast<float>(v + noise(rng));
  }
  const OrientationRefiner refiner(model, rays, {});
  const Rotation start = Rotation::from_axis_angle(Eigen::Vector3d(1, 2, -1), deg_to_rad(1.2)) * truth;
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  ASSERT_NEAR(rad_to_deg(cubic.misorientation_angle(start, truth)), 1.2, 1e-9);
  const RefineResult r = refiner.refine(pattern.data(), start);
  EXPECT_LT(rad_to_deg(cubic.misorientation_angle(r.orientation, truth)), 0.15);
  EXPECT_GT(r.correlation, refiner.correlation(pattern.data(), start) + 0.05);
}

}  // namespace
}  // namespace orderband
