// Band profiles of plane families on spheres: the analytic levels of one band, the inversion
// symmetry of the profiles, and what ordering changes on the many-beam spheres of Ni₃Al and γ.
#include "orderband/family_profile_contrast.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "orderband/dynamical_sphere.hpp"
#include "orderband/pair_catalog.hpp"
#include "orderband/units.hpp"

namespace orderband {
namespace {

TEST(SphereBandProfile, OneBandGivesItsAnalyticLevels) {
  // A sphere of intensity 1 + A inside one band of half-width w around the plane n·x = 0 and 1
  // elsewhere: its mean is 1 + A sin w (the band covers sin w of the sphere), so bins well inside
  // the band read (1 + A)/(1 + A sin w) − 1 and bins well outside 1/(1 + A sin w) − 1 (bilinear
  // interpolation blurs the edge over about a pixel, 0.46° here). With the Bragg angle equal to w
  // the band edges lie at |u| = 1, midway between the bins centred at 0.875 and 1.125, whose mean
  // is the middle of the two levels: bins shifted by half their width would move it by about a
  // quarter of the step.
  const SphereGrid grid(128);
  SphereMap map(grid);
  const Eigen::Vector3d n = Eigen::Vector3d(1, 2, 3).normalized();
  const double w = deg_to_rad(2.0), a = 0.5;
  for (long p = 0; p < grid.npix(); ++p) {
    map.sum[p] = std::abs(std::asin(n.dot(grid.centre_of(p)))) < w ? 1 + a : 1;
    map.weight[p] = 1;
  }
  const ProfileBinning bins;
  const std::vector<double> profile = sphere_band_profile(map, {n}, w, bins);
  ASSERT_EQ(profile.size(), 20u);
  const double mean = 1 + a * std::sin(w), inside = (1 + a) / mean - 1, outside = 1 / mean - 1;
  for (int b = 0; b < bins.bins(); ++b) {
    const double u = std::abs(bins.centre(b));
    if (u < 0.7) {
      EXPECT_NEAR(profile[b], inside, 2e-3) << "u " << bins.centre(b);
    } else if (u > 1.3) {
      EXPECT_NEAR(profile[b], outside, 2e-3) << "u " << bins.centre(b);
    } else if (u > 1) {
      EXPECT_NEAR((profile[b] + profile[b < 10 ? b + 1 : b - 1]) / 2, (inside + outside) / 2, 0.05 * a)
          << "u " << bins.centre(b);
    }
  }
}

/// Ni₃Al and γ spheres with a cheap beam set (geometry, not convergence, is checked here).
std::vector<FamilyProfileContrast> nickel_pair_contrasts(std::vector<PairFamily>& rows) {
  const OrderingPair pair = load_named_pair("ni");
  rows = pair_family_table(pair, 20, 1.0);
  DynamicalSphereSpec spec;
  spec.nside = 128;
  spec.beams = {1.2, 16, 80};
  const DynamicalSphere ordered = dynamical_sphere(pair.ordered, spec),
                        disordered = dynamical_sphere(pair.disordered, spec);
  return family_profile_contrasts(ordered.intensity, disordered.intensity, rows);
}

TEST(FamilyProfileContrast, ProfilesAreEvenAndTheLowestSuperlatticeBandsAppearWithOrdering) {
  std::vector<PairFamily> rows;
  const std::vector<FamilyProfileContrast> c = nickel_pair_contrasts(rows);
  ASSERT_EQ(c.size(), rows.size());
  double largest_odd = 0;
  for (size_t i = 0; i < rows.size(); ++i) {
    // Both spheres are invariant under inversion (the Laue group holds it), so every profile is
    // even in u, up to the unfolding's interpolation (sector pixels keep their solved values,
    // their antipodes are interpolated) and the sampling: measured at most 1.2e-4 here. Samples
    // taken on one side of the planes only, or bins off centre, would make the odd part about
    // 0.07 at the band edges, where the profiles change by about 0.3 per half θ_B.
    const size_t nb = c[i].u.size();
    for (size_t b = 0; b < nb / 2; ++b) {
      EXPECT_NEAR(c[i].u[b], -c[i].u[nb - 1 - b], 1e-12);
      for (const auto* profile : {&c[i].ordered, &c[i].disordered})
        largest_odd = std::max(largest_odd, std::abs((*profile)[b] - (*profile)[nb - 1 - b]));
    }
  }
  EXPECT_LT(largest_odd, 1e-3);

  // The first two superlattice families gain a band with ordering: their interior over their
  // flanks rises (both lie on the planes of a fundamental band of γ, {200} and {220}, whose
  // dynamical profile already peaks at the centre, so γ shows contrast there too). Measured with
  // this beam set +0.017 ({100}) and +0.041 ({110}); with the default one +0.010 and +0.034. The
  // changes of the other families are smaller and change sign between the two beam sets.
  for (size_t i = 0; i < rows.size(); ++i) {
    const std::string label = rows[i].family.label();
    if (label != "{100}" && label != "{110}") continue;
    EXPECT_GT(c[i].contrast_ordered - c[i].contrast_disordered, 0.005) << label;
  }
}

}  // namespace
}  // namespace orderband
