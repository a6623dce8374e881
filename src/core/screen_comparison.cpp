// Heat-treatment trials compared: numbers, kinetics, rankings.
#include "orderband/screen_comparison.hpp"

#include <algorithm>
#include <cmath>
#include <map>

#include "orderband/error.hpp"
#include "orderband/stereology.hpp"

namespace orderband {

TrialNumbers trial_numbers(const TrialSummary& s) {
  TrialNumbers n;
  n.ordered_fraction = s.ordered_fraction;
  const double section_mean = s.secondary.mean_ecd_um;
  n.secondary_mean_ecd_um = {section_mean, section_mean, section_mean};
  if (s.secondary_3d.determined) {
    n.secondary_mean_ecd_um = s.secondary_3d.mean_section_diameter_um;
    n.secondary_size_from_fit = true;
  }
  n.primary_fraction = s.primary.area_fraction;
  n.primary_count = s.primary.count;
  n.secondary_count = s.secondary.count;
  return n;
}

namespace {

/// The truth's numbers: exact values, so the truth's verdict against the same window is decided.
std::optional<TrialNumbers> truth_numbers(const TrialSummary& s) {
  if (!s.truth) return std::nullopt;
  const TrialTruth& t = *s.truth;
  TrialNumbers n;
  n.ordered_fraction = {t.ordered_fraction, t.ordered_fraction, t.ordered_fraction};
  n.secondary_mean_ecd_um = {t.secondary_mean_ecd_all_um, t.secondary_mean_ecd_all_um, t.secondary_mean_ecd_all_um};
  n.secondary_size_from_fit = true;
  n.primary_fraction = t.primary_fraction;
  n.primary_count = 1000, n.secondary_count = 1000;  // the truth is exact: no class is too small to judge
  return n;
}

/// The standard error of a trial's 3-D mean radius (µm) from its diameter's 95 % interval; NaN
/// without an interval.
double radius_error(const TrialSummary& s) {
  const Measured& d = s.secondary_3d.mean_diameter_um;
  return 0.5 * standard_error_from_log_interval(d.value, d.low, d.high);
}

/// The kinetics of the trials at one temperature; the radius used per trial goes to `kinetic_radius`.
TemperatureKinetics fit_temperature(const TrialsConfig& tc, const std::vector<TrialSummary>& summaries,
                                    double temperature_c, const std::vector<size_t>& idx,
                                    std::vector<double>& kinetic_radius) {
  TemperatureKinetics k;
  k.temperature_c = temperature_c;
  k.trials = idx;
  k.three_d = std::all_of(idx.begin(), idx.end(), [&](size_t i) {
    return summaries[i].secondary_3d.determined && summaries[i].secondary_3d.mean_diameter_um.value > 0;
  });
  std::vector<double> t, r, se;
  for (size_t i : idx) {
    const double radius =
        0.5 * (k.three_d ? summaries[i].secondary_3d.mean_diameter_um.value : summaries[i].secondary.mean_ecd_um);
    if (radius > 0) t.push_back(tc.trials[i].time_h), r.push_back(radius), se.push_back(radius_error(summaries[i]));
    kinetic_radius[i] = radius;
  }
  k.fitted_trials = t.size();
  // The radii's own errors enter where every 3-D mean has its interval.
  if (!k.three_d || !std::all_of(se.begin(), se.end(), [](double v) { return v > 0 && std::isfinite(v); })) se.clear();
  try {
    if (t.size() < 2) fail("fewer than two trials with secondary particles");
    k.fit = tc.exponent ? fit_coarsening(t, r, *tc.exponent, se) : fit_coarsening_free(t, r);
  } catch (const Error& e) {
    k.note = e.what();
  }
  return k;
}

void fit_kinetics(const TrialsConfig& tc, const std::vector<TrialSummary>& summaries, ScreenComparison& out) {
  std::map<double, std::vector<size_t>> by_temperature;
  for (size_t i = 0; i < tc.trials.size(); ++i) by_temperature[tc.trials[i].temperature_c].push_back(i);
  out.kinetic_radius.assign(tc.trials.size(), 0.0);
  std::vector<double> temps, ks;
  for (const auto& [temp, idx] : by_temperature) {
    out.kinetics.push_back(fit_temperature(tc, summaries, temp, idx, out.kinetic_radius));
    const auto& fit = out.kinetics.back().fit;
    if (fit && fit->k > 0) temps.push_back(temp), ks.push_back(fit->k);
  }
  if (temps.size() >= 2) out.arrhenius = fit_arrhenius(temps, ks);
}

}  // namespace

ScreenComparison compare_trials(const TrialsConfig& tc, const std::vector<TrialSummary>& summaries) {
  if (summaries.size() != tc.trials.size())
    fail("internal: ", summaries.size(), " summaries for ", tc.trials.size(), " trials");
  ScreenComparison c;
  for (const TrialSummary& s : summaries) c.numbers.push_back(trial_numbers(s));
  fit_kinetics(tc, summaries, c);
  c.ranking = rank_trials(c.numbers, tc.target);
  for (const TrialSummary& s : summaries) c.truth.push_back(truth_numbers(s));
  if (std::all_of(c.truth.begin(), c.truth.end(), [](const auto& t) { return t.has_value(); })) {
    std::vector<TrialNumbers> exact;
    for (const auto& t : c.truth) exact.push_back(*t);
    c.truth_ranking = rank_trials(exact, tc.target);
  }
  return c;
}

std::pair<size_t, const Ranked*> place_in(const std::vector<Ranked>& ranking, size_t trial) {
  for (size_t k = 0; k < ranking.size(); ++k)
    if (ranking[k].trial == trial) return {k + 1, &ranking[k]};
  return {0, nullptr};
}

}  // namespace orderband
