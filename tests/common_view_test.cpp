// Two grains' patterns compared over the crystal directions both show: equal-density weights, and a
// grain's position between another grain's classes.
#include "orderband/common_view.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "orderband/band_profile.hpp"
#include "orderband/units.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

/// A crystal-frame intensity with the cubic symmetry: bands on the {100} planes (Gaussian across,
/// σ 1.5°) whose strength changes fourfold along each band, weakest at ⟨100⟩, strongest at ⟨110⟩,
/// as bands brighten where others cross them.
double cubic_band_intensity(const Eigen::Vector3d& x) {
  const double s = deg_to_rad(1.5);
  double v = 1;
  for (int i = 0; i < 3; ++i) {
    const double a = x[(i + 1) % 3], b = x[(i + 2) % 3];
    v += 0.3 * std::exp(-x[i] * x[i] / (2 * s * s)) * (1 + 12 * a * a * b * b);
  }
  return v;
}

/// The intensity as a detector at orientation g shows it (3 × 3 samples per pixel).
std::vector<float> cubic_pattern_at(const DetectorGeometry& geo, const Rotation& g) {
  const int w = geo.width(), h = geo.height();
  std::vector<float> p(static_cast<size_t>(w) * h);
  for (int i = 0; i < h; ++i)
    for (int j = 0; j < w; ++j) {
      double v = 0;
      for (int a = 0; a < 3; ++a)
        for (int b = 0; b < 3; ++b)
          v += cubic_band_intensity(g.matrix() * geo.direction_sample({j + (b + 0.5) / 3, i + (a + 0.5) / 3}).vec());
      p[static_cast<size_t>(i) * w + j] = static_cast<float>(v / 9);
    }
  return p;
}

std::vector<double> weighted_profile_means(const BandProfiler& profiler, const std::vector<float>& pattern,
                                           const std::vector<double>& weight, const DetectorRays& rays,
                                           const Rotation& g) {
  std::vector<FamilyProfile> prof;
  profiler.profile_weighted(pattern.data(), weight, rays, g, prof);
  std::vector<double> m;
  for (int b = 0; b < profiler.bins(); ++b) m.push_back(prof[0].weight[b] > 0 ? prof[0].mean(b) : std::nan(""));
  return m;
}

TEST(CommonView, TwoOrientationsProfileTheSameIntensityAlikeOverTheirCommonDirections) {
  // The same crystal-frame intensity seen at two orientations: a family's profile averages its
  // bands over the stretches each screen shows, so the two profiles differ where the band's
  // strength changes along it; weighted to the same density of directions they agree.
  const DetectorGeometry geo = test::square_screen();
  const DetectorRays rays(geo);
  const BandProfiler profiler({{"{100}", {{1, 0, 0}, {0, 1, 0}, {0, 0, 1}}, deg_to_rad(1.5)}},
                              ProfileSpec{2.5, 0.25, true});
  const std::vector<Rotation> g = random_rotations(12, 5);
  double plain_sum = 0, common_sum = 0;
  int pairs = 0;
  for (size_t k = 0; k + 1 < g.size(); k += 2) {
    const std::vector<float> pa = cubic_pattern_at(geo, g[k]), pb = cubic_pattern_at(geo, g[k + 1]);
    const std::vector<double> ones(rays.direction.size(), 1.0);
    const CommonView view = common_view_weights(rays, {}, g[k], g[k + 1], CrystalSymmetry::cubic(), 16);
    EXPECT_GT(view.shared, 0.3);
    EXPECT_LE(view.shared, 1.0);
    const auto a = weighted_profile_means(profiler, pa, ones, rays, g[k]),
               b = weighted_profile_means(profiler, pb, ones, rays, g[k + 1]);
    const auto ca = weighted_profile_means(profiler, pa, view.a, rays, g[k]);
    const auto cb = weighted_profile_means(profiler, pb, view.b, rays, g[k + 1]);
    // Differences in units of the band's height in the first profile (centre bin over the last).
    const double height = a.front() - a.back();
    double plain = 0, common = 0;
    for (size_t i = 0; i < a.size(); ++i)
      plain += std::pow((a[i] - b[i]) / height, 2), common += std::pow((ca[i] - cb[i]) / height, 2);
    plain_sum += std::sqrt(plain / a.size()), common_sum += std::sqrt(common / a.size());
    ++pairs;
  }
  // Measured: rms difference 0.112 of the band's height unweighted, 0.009 weighted (six pairs).
  EXPECT_LT(common_sum / pairs, 0.02);
  EXPECT_GT(plain_sum / pairs, 5 * common_sum / pairs);
}

TEST(CommonView, APositionBetweenTwoClassesIgnoresEachFamilysOffset) {
  // Two families of 4 bins; h lies at 0.7 of the way from class 0 to class 1, each family shifted by
  // its own offset; a bin outside the signature carries a value far off, and one bin is not covered.
  const std::vector<double> class0 = {1.0, 2.0, 1.5, 0.5, 3.0, 2.0, 2.5, 1.0};
  const std::vector<double> class1 = {1.4, 2.2, 1.1, 0.9, 3.5, 1.5, 2.7, 1.3};
  std::vector<double> h(8), signature = {1, 1, 1, 0, 1, 1, 1, 1};
  const double offset[2] = {0.37, -1.2};
  for (size_t i = 0; i < 8; ++i) h[i] = class0[i] + 0.7 * (class1[i] - class0[i]) + offset[i / 4];
  h[3] = 50.0;          // outside the signature
  h[6] = std::nan("");  // not covered
  EXPECT_NEAR(position_between_classes(h, class0, class1, signature, 4), 0.7, 1e-12);
  // The class difference alone, with no family of two usable bins: no position.
  EXPECT_TRUE(std::isnan(position_between_classes(h, class0, class1, {1, 0, 0, 0, 0, 0, 0, 1}, 4)));
}

TEST(CommonView, TheDataToModelSlopeIsTheLeastSquaresSlope) {
  const std::vector<double> model = {9, 9, 0.0, 1.0, 2.0, 4.0, 7.0};
  std::vector<double> data(model.size());
  for (size_t i = 0; i < model.size(); ++i) data[i] = 0.8 * model[i] + 0.3;
  data[0] = -100;  // before `from`
  EXPECT_NEAR(data_to_model_slope(data, model, 2), 0.8, 1e-12);
  EXPECT_EQ(data_to_model_slope(data, model, 4), 1.0);  // three entries: too few
}

}  // namespace
}  // namespace orderband
