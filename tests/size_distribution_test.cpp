// Size distributions: the LSW law's analytic moments; log-normal sampling.
#include "orderband/size_distribution.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "orderband/error.hpp"

namespace orderband {
namespace {

TEST(LswDistribution, MomentsOfTheAnalyticForm) {
  // Lifshitz & Slyozov, J. Phys. Chem. Solids 19 (1961) 35; Wagner, Z. Elektrochem. 65 (1961) 581
  // (citations from memory): h(u) integrates to 1, has mean 1 and vanishes beyond u = 1.5; its
  // standard deviation is 0.215 and its mode 1.135 (computed from the formula while planning).
  const int n = 200000;
  double m0 = 0, m1 = 0, m2 = 0, mode_u = 0, mode_h = 0;
  for (int k = 0; k < n; ++k) {
    const double u = 1.5 * (k + 0.5) / n, h = lsw_density(u), du = 1.5 / n;
    m0 += h * du, m1 += u * h * du, m2 += u * u * h * du;
    if (h > mode_h) mode_h = h, mode_u = u;
  }
  EXPECT_NEAR(m0, 1.0, 1e-4);
  EXPECT_NEAR(m1, 1.0, 1e-4);
  EXPECT_NEAR(std::sqrt(m2 - m1 * m1), 0.215, 1e-3);
  EXPECT_NEAR(mode_u, 1.135, 2e-3);
  EXPECT_EQ(lsw_density(1.5), 0.0);
  EXPECT_EQ(lsw_density(1.7), 0.0);
  EXPECT_GT(lsw_density(1.49), 0.0);
}

TEST(LswDistribution, SamplesFollowTheLaw) {
  const SizeDistribution d = SizeDistribution::lsw(0.2);
  std::mt19937_64 rng(3);
  const int n = 100000;
  double s = 0, s2 = 0, mx = 0;
  for (int k = 0; k < n; ++k) {
    const double x = d.sample(rng) / 0.2;
    s += x, s2 += x * x, mx = std::max(mx, x);
  }
  EXPECT_NEAR(s / n, 1.0, 0.003);                                    // SE 0.0007
  EXPECT_NEAR(std::sqrt(s2 / n - (s / n) * (s / n)), 0.215, 0.003);  // SE 0.0005
  EXPECT_LE(mx, 1.5);
  EXPECT_NEAR(d.mean_cube_um3() / std::pow(0.2, 3), 1.130, 2e-3);  // ⟨u³⟩ = 1.130 (computed)
}

TEST(LognormalDistribution, MomentsAndQuantiles) {
  const SizeDistribution d = SizeDistribution::lognormal(0.1, 0.3);
  EXPECT_NEAR(d.quantile(0.5), 0.1, 1e-9);
  EXPECT_NEAR(d.quantile(0.841344746), 0.1 * std::exp(0.3), 1e-6);  // +1 sigma
  EXPECT_NEAR(d.mean_um(), 0.1 * std::exp(0.045), 1e-12);
  EXPECT_NEAR(d.mean_cube_um3(), 1e-3 * std::exp(4.5 * 0.09), 1e-12);
  std::mt19937_64 rng(5);
  double s3 = 0;
  for (int k = 0; k < 200000; ++k) s3 += std::pow(d.sample(rng), 3);
  EXPECT_NEAR(s3 / 200000 / d.mean_cube_um3(), 1.0, 0.01);
  EXPECT_THROW(SizeDistribution::lognormal(-1, 0.2), Error);
  EXPECT_THROW(SizeDistribution::lsw(0), Error);
}

}  // namespace
}  // namespace orderband
