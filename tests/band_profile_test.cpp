// Band profiles: a synthetic band's edges and centre, flat profiles of a uniform sphere, windows.
#include "orderband/band_profile.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "orderband/band_model.hpp"
#include "orderband/phase_cif.hpp"
#include "orderband/units.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

TEST(BandProfile, SyntheticBandEdgesAndCentre) {
  // One plane, θ_B = 1.2°, flat band with soft edges (the band model's profile, no edge lines),
  // rendered with 4 × 4 sub-pixel sampling: the profile's half-height points must sit at
  // ±θ_B within one bin and its centroid within 0.05° of the plane trace.
  const DetectorGeometry geo = test::square_screen();
  const DetectorRays rays(geo);
  const double theta = deg_to_rad(1.2);
  KinematicBandModel shape(load_phase_cif(ORDERBAND_TEST_DATA_DIR "/ni-fcc.cif"), 20,
                           BandModelParams{0.1, 2, 0.0, 0.08, 2.0});
  const Eigen::Vector3d n = Eigen::Vector3d(0.3, -0.5, 0.8).normalized();
  int checked = 0;
  for (const Rotation& g : random_rotations(20, 31)) {
    // Only orientations whose plane trace crosses the middle of the screen.
    const SampleDirection ns = g.to_sample(CrystalDirection(n));
    if (std::abs(ns.dot(geo.pixel_direction(40, 40))) > 0.2) continue;
    std::vector<float> pattern(80 * 80);
    for (int i = 0; i < 80; ++i)
      for (int j = 0; j < 80; ++j) {
        double v = 0;
        for (int a = 0; a < 4; ++a)
          for (int b = 0; b < 4; ++b) {
            const Eigen::Vector3d c = g.matrix() * geo.direction_sample({j + (b + 0.5) / 4, i + (a + 0.5) / 4}).vec();
            v += 1 + 0.5 * shape.profile(std::asin(n.dot(c)) / theta);
          }
        pattern[i * 80 + j] = static_cast<float>(v / 16);
      }
    const BandProfiler profiler({{"(test)", {n}, theta}}, ProfileSpec{2.5, 0.1});
    std::vector<FamilyProfile> prof;
    profiler.profile(pattern.data(), {}, rays, g, prof);
    const FamilyProfile& p = prof[0];
    // Centroid of (mean − 1) over the bins.
    double s = 0, sw = 0;
    for (int k = 0; k < profiler.bins(); ++k) {
      if (p.weight[k] <= 0) continue;
      const double excess = p.mean(k) - 1;
      s += excess * profiler.bin_centre_u(k), sw += excess;
    }
    EXPECT_LT(std::abs(rad_to_deg(s / sw * theta)), 0.05);
    // Half-height crossings on each side.
    for (int side : {-1, 1}) {
      double crossing = 0;
      for (int k = 0; k < profiler.bins(); ++k) {
        const double u = profiler.bin_centre_u(k);
        if (u * side <= 0 || p.weight[k] <= 0) continue;
        const int k2 = k + side;
        if (k2 < 0 || k2 >= profiler.bins() || p.weight[k2] <= 0) continue;
        const double a = p.mean(k) - 1.25, b = p.mean(k2) - 1.25;  // half of the 0.5 plateau
        if (a > 0 && b <= 0) crossing = u + side * 0.1 * a / (a - b);
      }
      EXPECT_NEAR(std::abs(crossing), 1.0, 0.1) << "side " << side;  // one bin = 0.1 θ_B
    }
    ++checked;
  }
  EXPECT_GE(checked, 3);
}

TEST(BandProfile, UniformSphereGivesFlatProfiles) {
  const DetectorGeometry geo = test::square_screen();
  const DetectorRays rays(geo);
  const std::vector<float> uniform(80 * 80, 3.0f);
  const BandProfiler profiler({{"{111}",
                                {Eigen::Vector3d(1, 1, 1).normalized(), Eigen::Vector3d(1, 1, -1).normalized(),
                                 Eigen::Vector3d(1, -1, 1).normalized(), Eigen::Vector3d(-1, 1, 1).normalized()},
                                deg_to_rad(1.2)}},
                              ProfileSpec{2.5, 0.25});
  std::vector<FamilyProfile> prof;
  std::vector<double> total(profiler.bins(), 0.0);
  for (const Rotation& g : random_rotations(400, 2)) {
    profiler.profile(uniform.data(), {}, rays, g, prof);
    for (int k = 0; k < profiler.bins(); ++k) {
      if (prof[0].weight[k] > 0) {
        EXPECT_NEAR(prof[0].mean(k), 3.0, 1e-6);
      }
      total[k] += prof[0].weight[k];
    }
  }
  // Solid angle per α bin, summed over many orientations: flat within 1 % (a strip of the
  // sphere has area ∝ cos α dα, which varies by 1e-4 over ±3°).
  double mean = 0;
  for (double t : total) mean += t / total.size();
  for (int k = 0; k < profiler.bins(); ++k) EXPECT_NEAR(total[k] / mean, 1.0, 0.01) << "bin " << k;
}

/// A plain profile for comparison: every pixel against every plane, the bin from the exact arcsine
/// in double precision (no cube map, no plan).
std::vector<FamilyProfile> plain_profile(const std::vector<ProfileFamily>& families, const ProfileSpec& spec,
                                         const float* pattern, const std::vector<uint8_t>& mask,
                                         const DetectorRays& rays, const Rotation& g) {
  const int bins = static_cast<int>(std::lround(2 * spec.u_max / spec.bin_u));
  std::vector<FamilyProfile> out(families.size());
  for (FamilyProfile& p : out)
    p.sum.assign(bins, 0), p.sum_sq.assign(bins, 0), p.weight.assign(bins, 0), p.weight_sq.assign(bins, 0),
        p.count.assign(bins, 0);
  for (size_t q = 0; q < rays.direction.size(); ++q) {
    if (!mask[q]) continue;
    const Eigen::Vector3d c = g.matrix() * rays.direction[q];
    for (size_t f = 0; f < families.size(); ++f)
      for (const Eigen::Vector3d& n : families[f].normals) {
        const double bf = (std::asin(n.normalized().dot(c)) / families[f].theta_b + spec.u_max) / spec.bin_u;
        if (!(bf >= 0 && bf < bins)) continue;
        const int b = static_cast<int>(bf);
        const double w = rays.solid_angle[q], v = pattern[q];
        out[f].sum[b] += w * v, out[f].weight[b] += w, out[f].count[b] += 1;
      }
  }
  return out;
}

/// Three cubic families with Bragg angles of the order of a nickel alloy's at 20 kV: {111}, {100}
/// and {220}, unnormalised plane normals.
std::vector<ProfileFamily> cubic_families() {
  return {{"{111}",
           {Eigen::Vector3d(1, 1, 1), Eigen::Vector3d(1, 1, -1), Eigen::Vector3d(1, -1, 1), Eigen::Vector3d(-1, 1, 1)},
           deg_to_rad(1.2)},
          {"{100}", {Eigen::Vector3d(1, 0, 0), Eigen::Vector3d(0, 1, 0), Eigen::Vector3d(0, 0, 1)}, deg_to_rad(0.7)},
          {"{220}",
           {Eigen::Vector3d(1, 1, 0), Eigen::Vector3d(1, -1, 0), Eigen::Vector3d(1, 0, 1), Eigen::Vector3d(1, 0, -1),
            Eigen::Vector3d(0, 1, 1), Eigen::Vector3d(0, 1, -1)},
           deg_to_rad(2.0)}};
}

TEST(BandProfile, FixedOrientationGivesTheSameSumsAsAnyOrientation) {
  // The plan of one orientation (the points of one grain) against the profiler that works at any
  // orientation: the same pixels, weights and counts in every bin, and the same sums but for the
  // order of the additions (the plan adds in four chains: 1e-12 relative, the rounding of double
  // sums of a few hundred terms is about 1e-15), at 12 random orientations of noisy patterns inside
  // a circular mask. Both against a plain loop in double precision: a bin's pixels agree except
  // where the arcsine's single-precision series and the exact one round a pixel into the next bin
  // (measured 36 of 3,920 bins over 80 patterns at 80 × 80 px in bench/profile_bench: under 1 %).
  const DetectorGeometry geo = test::square_screen();
  const DetectorRays rays(geo);
  const std::vector<ProfileFamily> families = cubic_families();
  const ProfileSpec spec;
  const BandProfiler profiler(families, spec);
  std::vector<uint8_t> circle(80 * 80);
  for (int i = 0; i < 80; ++i)
    for (int j = 0; j < 80; ++j) circle[i * 80 + j] = std::hypot(j + 0.5 - 40, i + 0.5 - 40) <= 40;
  std::mt19937 rng(3);
  std::normal_distribution<float> noise(1, 0.3);
  std::vector<float> pattern(80 * 80);
  int bins = 0, same_pixels = 0, occupied = 0;
  for (const Rotation& g : random_rotations(12, 8)) {
    const FixedOrientationProfiler plan = profiler.at_orientation(circle, rays, g);
    for (int repeat = 0; repeat < 2; ++repeat) {
      for (float& v : pattern) v = noise(rng);
      std::vector<FamilyProfile> any, fixed;
      profiler.profile(pattern.data(), circle, rays, g, any);
      plan.profile(pattern.data(), fixed);
      const std::vector<FamilyProfile> plain = plain_profile(families, spec, pattern.data(), circle, rays, g);
      for (size_t f = 0; f < families.size(); ++f)
        for (int b = 0; b < profiler.bins(); ++b) {
          EXPECT_NEAR(any[f].sum[b], fixed[f].sum[b], 1e-12 * std::abs(any[f].sum[b]) + 1e-300);
          EXPECT_NEAR(any[f].sum_sq[b], fixed[f].sum_sq[b], 1e-12 * any[f].sum_sq[b] + 1e-300);
          EXPECT_EQ(any[f].weight[b], fixed[f].weight[b]);
          EXPECT_EQ(any[f].weight_sq[b], fixed[f].weight_sq[b]);
          EXPECT_EQ(any[f].count[b], fixed[f].count[b]);
          ++bins;
          occupied += plain[f].count[b] > 0;
          if (plain[f].count[b] != any[f].count[b]) continue;
          ++same_pixels;
          if (plain[f].weight[b] > 0) {
            EXPECT_NEAR(any[f].mean(b), plain[f].mean(b), 1e-9);
          }
        }
    }
  }
  EXPECT_GT(occupied, bins / 4);  // the strips reach the detector at these orientations
  EXPECT_GE(same_pixels, 0.98 * bins);
}

TEST(BandProfile, FoldedBinsPoolBothSidesOfEachPlane) {
  // Folded, bin k over |u| holds the pixels of the two unfolded bins at ±u: the sums, weights and
  // counts of the mirrored pair, at 10 random orientations of noisy patterns. A pixel may land one
  // bin off where the offset's rounding moves it across a bin edge (the unfolded index is u/bin +
  // u_max/bin in single precision): counts must agree in at least 99 % of the bins, and the total
  // over all bins exactly.
  const DetectorGeometry geo = test::square_screen();
  const DetectorRays rays(geo);
  const std::vector<ProfileFamily> families = {cubic_families()[0], cubic_families()[2]};  // {111}, {220}
  const BandProfiler two_sided(families, ProfileSpec{2.5, 0.25, false});
  const BandProfiler folded(families, ProfileSpec{2.5, 0.25, true});
  ASSERT_EQ(two_sided.bins(), 20);
  ASSERT_EQ(folded.bins(), 10);
  EXPECT_DOUBLE_EQ(folded.bin_centre_u(0), 0.125);
  EXPECT_DOUBLE_EQ(folded.bin_centre_u(9), 2.375);
  std::mt19937 rng(5);
  std::normal_distribution<float> noise(1, 0.3);
  std::vector<float> pattern(80 * 80);
  int bins = 0, same = 0;
  for (const Rotation& g : random_rotations(10, 12)) {
    for (float& v : pattern) v = noise(rng);
    std::vector<FamilyProfile> a, b;
    two_sided.profile(pattern.data(), {}, rays, g, a);
    folded.profile(pattern.data(), {}, rays, g, b);
    for (size_t f = 0; f < families.size(); ++f) {
      int total_a = 0, total_b = 0;
      for (int k = 0; k < folded.bins(); ++k) {
        const int hi = 10 + k, lo = 9 - k;
        const int pooled = a[f].count[hi] + a[f].count[lo];
        total_a += pooled, total_b += b[f].count[k], ++bins;
        if (pooled != b[f].count[k]) continue;
        ++same;
        EXPECT_NEAR(b[f].weight[k], a[f].weight[hi] + a[f].weight[lo], 1e-12 * (1 + b[f].weight[k]));
        EXPECT_NEAR(b[f].sum[k], a[f].sum[hi] + a[f].sum[lo], 1e-9 * (1 + std::abs(b[f].sum[k])));
      }
      EXPECT_EQ(total_a, total_b);
    }
  }
  EXPECT_GE(same, 0.99 * bins);
}

TEST(BandProfile, WindowsSelectWholeBins) {
  const BandProfiler profiler({{"x", {Eigen::Vector3d(0, 0, 1)}, 0.02}}, ProfileSpec{2.5, 0.1});
  FamilyProfile p;
  const int nb = profiler.bins();
  p.sum.assign(nb, 0), p.sum_sq.assign(nb, 0), p.weight.assign(nb, 1), p.weight_sq.assign(nb, 1), p.count.assign(nb, 1);
  for (int k = 0; k < nb; ++k) {
    const double u = std::abs(profiler.bin_centre_u(k));
    const double v = u < 1 ? 2.0 : 1.0;
    p.sum[k] = v, p.sum_sq[k] = v * v;
  }
  const FamilyWindows w = profiler.windows(p);
  EXPECT_EQ(w.interior.count, 12);  // |u| ≤ 0.6: bins centred at ±0.05 … ±0.55
  EXPECT_EQ(w.flanks.count, 16);    // 1.4 ≤ |u| ≤ 2.2: ±1.45 … ±2.15
  EXPECT_DOUBLE_EQ(w.interior.mean, 2.0);
  EXPECT_DOUBLE_EQ(w.flanks.mean, 1.0);
  EXPECT_DOUBLE_EQ(w.interior.variance_of_mean, 0.0);
}

}  // namespace
}  // namespace orderband
