#include "orderband/stereology.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <random>
#include <sstream>

#include "orderband/error.hpp"
#include "test_support.hpp"

using namespace orderband;

namespace {

SphereSizes lognormal(double median, double sigma) {
  return SphereSizes::of(SphereSizeModel::lognormal, {median, sigma});
}
SphereSizes lsw(double mean) { return SphereSizes::of(SphereSizeModel::lsw, {mean}); }

/// ∫ x^power f(x) dx over (0, top) by the midpoint rule on a fine grid.
template <class F>
double moment(F&& f, double top, int power, int steps = 200000) {
  double s = 0;
  const double h = top / steps;
  for (int i = 0; i < steps; ++i) {
    const double x = (i + 0.5) * h;
    s += std::pow(x, power) * f(x) * h;
  }
  return s;
}

/// Sections of spheres drawn from `s` by a random plane: a sphere is cut with a probability
/// proportional to its diameter and at a uniform height, so d = √(D² − 4z²), |z| < D/2.
/// `sphere_draw` draws diameters from the distribution.
template <class Draw>
std::vector<double> sections(Draw&& sphere_draw, double d_max, int count, std::mt19937_64& rng) {
  std::uniform_real_distribution<double> u(0, 1);
  std::vector<double> out;
  while (static_cast<int>(out.size()) < count) {
    const double d = sphere_draw(rng);
    if (u(rng) * d_max > d) continue;  // size-biased: accepted with probability D / d_max
    const double z = (u(rng) - 0.5) * d;
    out.push_back(std::sqrt(std::max(0.0, d * d - 4 * z * z)));
  }
  return out;
}

}  // namespace

TEST(Stereology, SectionDensityMatchesScipyQuadOfTheUntransformedKernel) {
  const double median = 0.09, sigma = 0.25, limit = 0.05;
  const std::vector<double> ds{0.005, 0.03, 0.06, 0.0899, 0.09, 0.12, 0.2};
  std::ostringstream args;
  args << median << ' ' << sigma << ' ' << limit;
  for (double d : ds) args << ' ' << d;
  const auto r = test::run_reference_script("wicksell_reference.py", args.str());
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::istringstream in(r.out);
  const SphereSizes s = lognormal(median, sigma);
  for (double d : ds) {
    double ref = 0;
    in >> ref;
    EXPECT_NEAR(section_density(s, d), ref, 1e-7 * std::max(1.0, ref)) << "d = " << d;
  }
  double share = 0;
  in >> share;
  EXPECT_NEAR(section_share_above(s, limit), share, 1e-7);
}

TEST(Stereology, SectionsIntegrateToOneWithTheMeanSectionOfPiOver4TimesD2OverD) {
  // ⟨d⟩ = (π/4) ⟨D²⟩ / ⟨D⟩ for spheres cut by a random plane (Underwood, Quantitative Stereology,
  // 1970, from memory; for one size, ⟨d⟩ = π D / 4).
  for (const SphereSizes& s : {lognormal(0.1, 0.05), lognormal(0.1, 0.4), lsw(0.12)}) {
    const double top = s.highest_um();
    auto f = [&](double d) { return section_density(s, d); };
    EXPECT_NEAR(moment(f, top, 0, 20000), 1.0, 2e-4) << to_string(s.model);
    const double d2 = moment([&](double d) { return s.density(d); }, top, 2);
    EXPECT_NEAR(moment(f, top, 1, 20000), M_PI / 4 * d2 / s.mean_um(), 2e-4 * s.mean_um()) << to_string(s.model);
  }
}

TEST(Stereology, ShareAboveTheLimitMatchesSampledSections) {
  std::mt19937_64 rng(5);
  const SphereSizes s = lognormal(0.1, 0.3);
  std::lognormal_distribution<double> draw(std::log(0.1), 0.3);
  const std::vector<double> d = sections(draw, s.highest_um(), 200000, rng);
  for (double limit : {0.03, 0.07, 0.12}) {
    const double seen = std::count_if(d.begin(), d.end(), [&](double x) { return x >= limit; }) / double(d.size());
    const double se = std::sqrt(seen * (1 - seen) / d.size());
    EXPECT_NEAR(section_share_above(s, limit), seen, 4 * se) << "limit " << limit;
  }
  EXPECT_DOUBLE_EQ(section_share_above(s, 0.0), 1.0);
}

TEST(Stereology, RecoversLognormalSpheresFromTruncatedSectionsWithHonestIntervals) {
  // 20 samples of ~200 resolved sections each from log-normal spheres (mean 0.1 µm), the smallest
  // sections (below 0.05 µm, 11 % of them) unseen: the fitted 3-D mean within 15 % and inside its
  // own 95 % interval in at least 17 of 20; the number density and the mean diameter of all
  // sections (resolved or not) likewise.
  const double median = 0.096, sigma = 0.25, limit = 0.05, nv = 400.0, area = 4.0;  // per µm³, µm²
  const SphereSizes truth = lognormal(median, sigma);
  int mean_covered = 0, density_covered = 0, section_covered = 0, within = 0;
  for (int seed = 1; seed <= 20; ++seed) {
    std::mt19937_64 rng(seed);
    const int total = std::poisson_distribution<int>(nv * truth.mean_um() * area)(rng);
    std::lognormal_distribution<double> draw(std::log(median), sigma);
    SectionSample sample{{}, limit, area};
    for (double d : sections(draw, truth.highest_um(), total, rng))
      if (d >= limit) sample.diameter_um.push_back(d);
    const SphereSizeFit fit = fit_sphere_sizes(sample, SphereSizeModel::lognormal);
    ASSERT_TRUE(fit.determined) << fit.reason;
    const double section_truth = M_PI / 4 * truth.mean_square_um2() / truth.mean_um();
    section_covered += fit.mean_section_low_um <= section_truth && section_truth <= fit.mean_section_high_um;
    within += std::abs(fit.mean_diameter_um / truth.mean_um() - 1) < 0.15;
    mean_covered += fit.mean_low_um <= truth.mean_um() && truth.mean_um() <= fit.mean_high_um;
    density_covered += fit.density_low_per_um3 <= nv && nv <= fit.density_high_per_um3;
  }
  EXPECT_EQ(within, 20);
  EXPECT_GE(mean_covered, 17);
  EXPECT_GE(density_covered, 17);
  EXPECT_GE(section_covered, 17);
}

TEST(Stereology, RecoversLswSpheresAndTellsWhenTooFewSectionsFixNothing) {
  std::mt19937_64 rng(11);
  const SphereSizes truth = lsw(0.2);
  std::uniform_real_distribution<double> u(0, 1);
  // LSW diameters by rejection under h(u) ≤ 2.2 on [0, 1.5).
  auto draw = [&](std::mt19937_64& r) {
    for (;;) {
      const double x = 1.5 * u(r);
      if (2.2 * u(r) < truth.density(0.2 * x) * 0.2) return 0.2 * x;
    }
  };
  SectionSample sample{sections(draw, 0.3, 300, rng), 0.0, 2.0};
  const double limit = 0.06;
  sample.limit_um = limit;
  std::erase_if(sample.diameter_um, [&](double d) { return d < limit; });
  const SphereSizeFit fit = fit_sphere_sizes(sample, SphereSizeModel::lsw);
  ASSERT_TRUE(fit.determined) << fit.reason;
  EXPECT_NEAR(fit.mean_diameter_um, 0.2, 0.015);
  EXPECT_LT(fit.mean_low_um, 0.2);
  EXPECT_GT(fit.mean_high_um, 0.2);

  sample.diameter_um.resize(6);
  const SphereSizeFit few = fit_sphere_sizes(sample, SphereSizeModel::lsw);
  EXPECT_FALSE(few.determined);
  EXPECT_NE(few.reason.find("only 6 resolved sections"), std::string::npos) << few.reason;
  EXPECT_THROW(fit_sphere_sizes({{0.1, -0.2}, 0.0, 1.0}, SphereSizeModel::lsw), Error);
  EXPECT_THROW(fit_sphere_sizes({{0.1}, 0.0, 0.0}, SphereSizeModel::lsw), Error);
}
