#include "orderband/detection_limit.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <random>

#include "orderband/error.hpp"
#include "orderband/particles.hpp"

using namespace orderband;

namespace {

ScanGrid square_grid(int rows, int cols, double step) {
  ScanGrid g;
  g.rows = rows, g.cols = cols, g.step_um = step;
  return g;
}

/// The share of a Gaussian beam centred at p inside the disc (centre c, radius r), by sampling the
/// beam: an implementation apart from the library's quadrature.
double sampled_share(const Eigen::Vector2d& p, const Eigen::Vector2d& c, double r, const BeamFootprint& b,
                     std::mt19937_64& rng) {
  std::normal_distribution<double> nx(p.x(), b.sigma_x_um), ny(p.y(), b.sigma_y_um);
  int inside = 0;
  const int n = 400;
  for (int i = 0; i < n; ++i) inside += (Eigen::Vector2d(nx(rng), ny(rng)) - c).squaredNorm() <= r * r;
  return inside / double(n);
}

}  // namespace

TEST(DetectionLimit, LargeSharpSectionsCoverTheirAreaInPoints) {
  const ScanGrid g = square_grid(10, 10, 0.025);
  const BeamFootprint sharp{1e-5, 1e-5};
  for (double d : {0.3, 1.0}) {
    const double cells = M_PI / 4 * d * d / (0.025 * 0.025);
    EXPECT_NEAR(expected_points_above(g, sharp, d, 0.0, 1e-4, 0.5), cells, 0.005 * cells) << d;
  }
  // A beam elongated 3× along y takes the small section's centre below one half.
  EXPECT_LT(expected_points_above(g, {0.01, 0.03}, 0.04, 0.0, 1e-4, 0.5),
            expected_points_above(g, {0.01, 0.01}, 0.04, 0.0, 1e-4, 0.5));
}

TEST(DetectionLimit, SectionsAboveTheLimitAreFoundAndSectionsBelowItMostlyNot) {
  // Discs on a 25 nm grid, blurred by a 10 × 29 nm beam (70° tilt), matrix level 0.05 and
  // per-point noise 0.25 as in a 5,000-count map; segmented as map does with min_points from the
  // limit. At 1.3× the limit ≥ 80 % of the sections are found (measured 100 %), at the limit about
  // half or more (66 %), at 0.6× at most 25 % (3 %).
  const ScanGrid g = square_grid(64, 64, 0.025);
  const BeamFootprint beam{0.010, 0.029};
  const double level = 0.05, noise = 0.25;
  const DetectionLimit lim = detection_limit(g, beam, level, noise);
  EXPECT_GT(lim.min_points, 1);
  EXPECT_LE(lim.false_particles, 0.5);
  EXPECT_GT(lim.diameter_um, lim.noise_diameter_um * 0.999);
  EXPECT_LT(lim.diameter_um, 0.2);
  std::mt19937_64 rng(3);
  std::normal_distribution<float> eps(0.0f, static_cast<float>(noise));
  SegmentSpec seg;
  seg.min_points = lim.min_points;
  for (const auto& [scale, lo, hi] : {std::tuple{1.3, 0.8, 1.01}, {1.0, 0.3, 0.95}, {0.6, -0.01, 0.25}}) {
    const double r = 0.5 * scale * lim.diameter_um;
    int found = 0, placed = 0;
    for (int trial = 0; trial < 6; ++trial) {
      // 16 discs on a 4 × 4 lattice of cells, each at a random offset.
      std::vector<float> f(g.count());
      std::vector<Eigen::Vector2d> centres;
      std::uniform_real_distribution<double> u(-0.1, 0.1);
      for (int i = 0; i < 4; ++i)
        for (int j = 0; j < 4; ++j) centres.push_back({(16 * j + 8) * 0.025 + u(rng), (16 * i + 8) * 0.025 + u(rng)});
      for (size_t k = 0; k < g.count(); ++k) {
        const Eigen::Vector2d p = g.position_um(g.point(k));
        double share = 0;
        for (const auto& c : centres)
          if ((p - c).norm() < r + 0.2) share += sampled_share(p, c, r, beam, rng);
        f[k] = static_cast<float>(level + (1 - level) * share) + eps(rng);
      }
      const Segmentation s = segment_particles(g, f, {}, seg);
      for (const auto& c : centres) {
        ++placed;
        bool hit = false;
        for (const Particle2D& p : s.particles)
          hit = hit || (Eigen::Vector2d(p.centroid_x_um, p.centroid_y_um) - c).norm() < r + 0.05;
        found += hit;
      }
    }
    const double share = found / double(placed);
    EXPECT_GE(share, lo) << scale << "x the limit " << lim.diameter_um;
    EXPECT_LE(share, hi) << scale << "x the limit " << lim.diameter_um;
  }
  EXPECT_THROW(detection_limit(g, beam, 0.6, noise), Error);
}
