// The comparison of trials: kinetics from the trials' radii, the Arrhenius law, the rankings.
#include <gtest/gtest.h>

#include <cmath>

#include "orderband/kinetics.hpp"
#include "orderband/screen_comparison.hpp"
#include "orderband/trial_summary_file.hpp"

namespace orderband {
namespace {

/// A trial whose secondary particles have 3-D mean diameter 2 r (and sections of mean ECD 1.5 r).
TrialSummary trial_with_radius(double r, double fraction = 0.3) {
  TrialSummary s;
  s.ordered_fraction = {fraction, fraction - 0.02, fraction + 0.02};
  s.secondary = {0.25, 40, 1.5 * r, 10.0};
  s.primary = {0.02, 1, 1.2, 0.1};
  s.secondary_3d.determined = true;
  s.secondary_3d.model = "lognormal";
  s.secondary_3d.mean_section_diameter_um = {1.6 * r, 1.5 * r, 1.7 * r};
  s.secondary_3d.mean_diameter_um = {2 * r, std::nan(""), std::nan("")};
  return s;
}

TrialsConfig trials_at(const std::vector<std::pair<double, double>>& temperature_time) {
  TrialsConfig tc;
  for (size_t i = 0; i < temperature_time.size(); ++i) {
    Trial t;
    t.label = std::to_string(i);
    t.label.insert(0, 1, 'T');
    t.temperature_c = temperature_time[i].first, t.time_h = temperature_time[i].second;
    tc.trials.push_back(t);
  }
  tc.exponent = 3.0;
  return tc;
}

TEST(ScreenComparison, ASubResolutionFractionTheMapDidNotMeasureIsNotCompared) {
  // A map whose learned estimator took the matrix as its zero reads about 0 for the sub-resolution
  // fraction by construction: the comparison takes it as missing (NaN; empty in comparison.csv),
  // not as a measured absence of tertiary γ′. A measured one, or one from a summary written before
  // the flag existed, is taken as it stands.
  const std::string base =
      R"({"ordered_area_fraction": 0.38, "ci95": {"low": 0.30, "high": 0.46},
          "subresolution_ordered_fraction": -0.002, "classes": {"secondary": {"area_fraction": 0.27, "count": 188,
          "mean_ecd_um": 0.098}})";
  EXPECT_TRUE(std::isnan(
      parse_trial_summary(base + R"(, "subresolution_measured": false})", "a").subresolution_ordered_fraction));
  EXPECT_EQ(parse_trial_summary(base + R"(, "subresolution_measured": true})", "b").subresolution_ordered_fraction,
            -0.002);
  EXPECT_EQ(parse_trial_summary(base + "}", "c").subresolution_ordered_fraction, -0.002);
}

TEST(ScreenComparison, RecoversTheRateConstantsAndTheActivationEnergyOfExactCubicCoarsening) {
  // r³ = r0³ + k(T) t exactly, with k(T) = k0 exp(−Q / R T): Q = 250 kJ/mol, k = 2e-5 µm³/h at
  // 760 °C; three times at each of 760 and 840 °C. The fit must give back k and Q.
  const double R = 8.314462618, Q = 250e3, r0 = 0.05;
  auto k_at = [&](double c) { return 2e-5 * std::exp(-Q / R * (1 / (c + 273.15) - 1 / (760 + 273.15))); };
  const TrialsConfig tc = trials_at({{760, 4}, {760, 16}, {760, 64}, {840, 4}, {840, 16}, {840, 64}});
  std::vector<TrialSummary> s;
  for (const Trial& t : tc.trials)
    s.push_back(trial_with_radius(std::cbrt(r0 * r0 * r0 + k_at(t.temperature_c) * t.time_h)));
  const ScreenComparison c = compare_trials(tc, s);
  ASSERT_EQ(c.kinetics.size(), 2u);
  EXPECT_EQ(c.kinetics[0].temperature_c, 760);
  EXPECT_TRUE(c.kinetics[0].three_d);
  ASSERT_TRUE(c.kinetics[0].fit && c.kinetics[1].fit);
  EXPECT_NEAR(c.kinetics[0].fit->k / k_at(760), 1.0, 1e-9);
  EXPECT_NEAR(c.kinetics[1].fit->k / k_at(840), 1.0, 1e-9);
  EXPECT_NEAR(c.kinetics[0].fit->r0_pow_n, r0 * r0 * r0, 1e-12);
  ASSERT_TRUE(c.arrhenius);
  EXPECT_NEAR(c.arrhenius->activation_kj_mol, 250.0, 1e-6);
  EXPECT_NEAR(c.kinetic_radius[2], std::cbrt(r0 * r0 * r0 + k_at(760) * 64), 1e-12);
}

TEST(ScreenComparison, TheThreeDMeansOwnIntervalsEnterTheRateConstantsInterval) {
  // Three trials exactly on r³ = r0³ + k t whose 3-D mean diameters carry 95 % intervals of
  // ×/÷ exp(1.96 · 0.07) (a 7 % standard error, as stereology.cpp writes them): no scatter, so the
  // interval of k is the errors' own, the same as fit_coarsening gives with σ_r = 0.07 r; without
  // the intervals, k's interval from three points on a line has zero width.
  const double r0 = 0.04, k = 2e-5;
  const TrialsConfig tc = trials_at({{760, 4}, {760, 16}, {760, 64}});
  std::vector<TrialSummary> with, without;
  std::vector<double> t, r, se;
  for (const Trial& trial : tc.trials) {
    const double radius = std::cbrt(r0 * r0 * r0 + k * trial.time_h);
    without.push_back(trial_with_radius(radius));
    with.push_back(trial_with_radius(radius));
    const double spread = std::exp(1.959963984540054 * 0.07);
    with.back().secondary_3d.mean_diameter_um = {2 * radius, 2 * radius / spread, 2 * radius * spread};
    t.push_back(trial.time_h), r.push_back(radius), se.push_back(0.07 * radius);
  }
  const CoarseningFit expected = fit_coarsening(t, r, 3, se);
  const ScreenComparison a = compare_trials(tc, with), b = compare_trials(tc, without);
  ASSERT_TRUE(a.kinetics[0].fit && b.kinetics[0].fit);
  EXPECT_TRUE(a.kinetics[0].fit->k_interval_from_radius_errors);
  EXPECT_NEAR(a.kinetics[0].fit->k_low, expected.k_low, 1e-12);
  EXPECT_NEAR(a.kinetics[0].fit->k_high, expected.k_high, 1e-12);
  EXPECT_GT(a.kinetics[0].fit->k_high - a.kinetics[0].fit->k_low, 0.2 * k);
  EXPECT_FALSE(b.kinetics[0].fit->k_interval_from_radius_errors);
  EXPECT_LT(b.kinetics[0].fit->k_high - b.kinetics[0].fit->k_low, 1e-9 * k);
}

TEST(ScreenComparison, FallsBackToResolvedSectionsWhenOneTrialOfATemperatureHasNoThreeDFit) {
  const TrialsConfig tc = trials_at({{760, 4}, {760, 16}, {760, 64}});
  std::vector<TrialSummary> s{trial_with_radius(0.05), trial_with_radius(0.06), trial_with_radius(0.08)};
  s[1].secondary_3d.determined = false;
  const ScreenComparison c = compare_trials(tc, s);
  ASSERT_EQ(c.kinetics.size(), 1u);
  EXPECT_FALSE(c.kinetics[0].three_d);
  // Half the resolved sections' mean ECD (1.5 r), not the 3-D radius.
  EXPECT_NEAR(c.kinetic_radius[0], 0.75 * 0.05, 1e-12);
  // The ranking's size for the trial without a fit is the resolved sections' mean, flagged as such.
  EXPECT_FALSE(c.numbers[1].secondary_size_from_fit);
  EXPECT_NEAR(c.numbers[1].secondary_mean_ecd_um.value, 1.5 * 0.06, 1e-12);
  EXPECT_TRUE(c.numbers[0].secondary_size_from_fit);
  EXPECT_NEAR(c.numbers[0].secondary_mean_ecd_um.value, 1.6 * 0.05, 1e-12);
}

TEST(ScreenComparison, OneTrialAtATemperatureGetsANoteAndNoArrhenius) {
  const TrialsConfig tc = trials_at({{760, 4}, {760, 16}, {840, 4}});
  const ScreenComparison c =
      compare_trials(tc, {trial_with_radius(0.05), trial_with_radius(0.06), trial_with_radius(0.07)});
  ASSERT_EQ(c.kinetics.size(), 2u);
  EXPECT_TRUE(c.kinetics[0].fit.has_value());
  EXPECT_FALSE(c.kinetics[1].fit.has_value());
  EXPECT_NE(c.kinetics[1].note.find("fewer than two"), std::string::npos);
  EXPECT_FALSE(c.arrhenius.has_value());
}

TEST(ScreenComparison, TruthIsRankedOnlyWhenEveryTrialHasOne) {
  TrialsConfig tc = trials_at({{760, 4}, {760, 16}});
  tc.target.ordered_fraction = {{0.35, 0.45}};
  std::vector<TrialSummary> s{trial_with_radius(0.05, 0.30), trial_with_radius(0.06, 0.40)};
  s[0].truth = TrialTruth{0.41, 0.08, 0.0};
  ScreenComparison c = compare_trials(tc, s);
  EXPECT_TRUE(c.truth[0].has_value());
  EXPECT_FALSE(c.truth[1].has_value());
  EXPECT_TRUE(c.truth_ranking.empty());
  // Measured: trial 1 (0.40 ± 0.02) is inside, trial 0 (0.30 ± 0.02) outside.
  ASSERT_EQ(c.ranking.size(), 2u);
  EXPECT_EQ(c.ranking[0].trial, 1u);
  EXPECT_EQ(c.ranking[0].verdict, Verdict::inside);
  EXPECT_EQ(c.ranking[1].verdict, Verdict::outside);
  s[1].truth = TrialTruth{0.30, 0.09, 0.0};
  c = compare_trials(tc, s);
  ASSERT_EQ(c.truth_ranking.size(), 2u);
  // The truth says the opposite: trial 0 (0.41) inside, trial 1 (0.30) outside.
  EXPECT_EQ(c.truth_ranking[0].trial, 0u);
  EXPECT_EQ(place_in(c.truth_ranking, 1).first, 2u);
  EXPECT_EQ(place_in(c.ranking, 1).first, 1u);
}

}  // namespace
}  // namespace orderband
