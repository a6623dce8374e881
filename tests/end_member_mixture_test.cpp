// The end members from a scan's own values: a two-Gaussian mixture with a uniform share for
// points that mix both phases under the beam, on planted data of known parameters.
#include <gtest/gtest.h>

#include <random>

#include "orderband/end_member_mixture.hpp"

namespace orderband {
namespace {

/// n values: a share `w0` from N(m0, s0), `w1` from N(m1, s1), the rest uniform on [m0, m1].
std::vector<double> planted(size_t n, double w0, double m0, double s0, double w1, double m1, double s1, uint32_t seed) {
  std::mt19937 rng(seed);
  std::uniform_real_distribution<double> u(0, 1);
  std::vector<double> v;
  for (size_t k = 0; k < n; ++k) {
    const double pick = u(rng);
    if (pick < w0)
      v.push_back(std::normal_distribution<double>(m0, s0)(rng));
    else if (pick < w0 + w1)
      v.push_back(std::normal_distribution<double>(m1, s1)(rng));
    else
      v.push_back(m0 + (m1 - m0) * u(rng));
  }
  return v;
}

// The mixed points' component spans the two means (it used to be a uniform over the values' 0.5–99.5 %
// range, which put the ordered mean at 0.911 and its share at 0.274 here). Measured on seeds 17, 18,
// 19: ordered means 0.924, 0.917, 0.930, shares 0.284, 0.309, 0.291.
TEST(EndMemberMixture, RecoversPlantedMeansSpreadsAndShares) {
  // 20,000 points: 60 % matrix N(0.05, 0.12), 30 % particles N(0.93, 0.15), 10 % edge points
  // spread evenly between. The standard errors of the means are about 0.001; the tolerances
  // (0.01 on means and spreads, 0.02 on shares) are far below the separations a wrong fit gives.
  const std::vector<double> v = planted(20000, 0.60, 0.05, 0.12, 0.30, 0.93, 0.15, 17);
  const std::array<EndMember, 2> c = two_component_mixture(v);
  EXPECT_NEAR(c[0].mean, 0.05, 0.01);
  EXPECT_NEAR(c[0].sd, 0.12, 0.01);
  EXPECT_NEAR(c[0].weight, 0.60, 0.02);
  EXPECT_NEAR(c[1].mean, 0.93, 0.01);
  EXPECT_NEAR(c[1].sd, 0.15, 0.01);
  EXPECT_NEAR(c[1].weight, 0.30, 0.02);
}

TEST(EndMemberMixture, OrdersTheComponentsAndHoldsForAFewOrderedPoints) {
  // 3 % ordered points only, well apart: the ordered component is still found, second.
  const std::vector<double> v = planted(30000, 0.96, -0.02, 0.10, 0.03, 1.05, 0.10, 5);
  const std::array<EndMember, 2> c = two_component_mixture(v);
  EXPECT_LT(c[0].mean, c[1].mean);
  EXPECT_NEAR(c[0].mean, -0.02, 0.01);
  EXPECT_NEAR(c[1].mean, 1.05, 0.03);
  EXPECT_NEAR(c[1].weight, 0.03, 0.01);
  // Too few values to fit: the start is returned untouched (weights 0).
  EXPECT_EQ(two_component_mixture({0.1, 0.9, 0.2})[1].weight, 0.0);
}

}  // namespace
}  // namespace orderband
