// Heat-treatment trials compared: each trial's numbers, the coarsening kinetics per temperature,
// the Arrhenius law over temperatures, and the ranking against the target window (with the truth
// beside it for synthetic trials).
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "orderband/kinetics.hpp"
#include "orderband/trials.hpp"

namespace orderband {

/// One size class of a trial's map.
struct ClassSummary {
  double area_fraction = 0;
  int count = 0;
  double mean_ecd_um = 0;  ///< mean of the resolved sections
  double number_density_per_um2 = 0;
};

/// The secondary class's preferred 3-D fit to its truncated sections (log-normal or LSW, by AIC).
struct SecondarySizeFit {
  bool determined = false;
  std::string model;                  ///< the preferred fit's name (empty: none)
  Measured mean_section_diameter_um;  ///< all sections, resolved or not, with its 95 % interval
  Measured mean_diameter_um;          ///< 3-D mean sphere diameter, with its 95 % interval
};

/// The truth of a synthetic trial, counted as the measurement is.
struct TrialTruth {
  double ordered_fraction = 0;
  double secondary_mean_ecd_all_um = 0;  ///< every section, resolved or not
  double primary_fraction = 0;
};

/// What the comparison needs of one trial's map (read from its summary).
struct TrialSummary {
  Measured ordered_fraction;  ///< with the ASTM E562 interval
  double subresolution_ordered_fraction = 0;
  ClassSummary primary, secondary;
  SecondarySizeFit secondary_3d;
  std::optional<TrialTruth> truth;
};

/// The coarsening fit of the trials at one temperature.
struct TemperatureKinetics {
  double temperature_c = 0;
  std::vector<size_t> trials;  ///< indices into the trials
  bool three_d = false;        ///< on 3-D mean radii (every trial had one), else on resolved sections
  size_t fitted_trials = 0;    ///< trials with a radius
  std::optional<CoarseningFit> fit;
  std::string note;  ///< why there is no fit
};

struct ScreenComparison {
  std::vector<TrialNumbers> numbers;          ///< per trial, for the ranking
  std::vector<double> kinetic_radius;         ///< per trial: the radius the kinetics used (µm; 0: none)
  std::vector<TemperatureKinetics> kinetics;  ///< ascending temperature
  std::optional<ArrheniusFit> arrhenius;      ///< two or more temperatures with a positive k
  std::vector<Ranked> ranking;
  std::vector<std::optional<TrialNumbers>> truth;  ///< per trial (synthetic trials)
  std::vector<Ranked> truth_ranking;               ///< only when every trial has a truth
};

/// A trial's numbers for the ranking: the ordered fraction with its E562 interval; the secondary
/// size as the mean of all sections from the preferred 3-D fit when determined, else the mean of
/// the resolved sections (then flagged as not from the fit).
TrialNumbers trial_numbers(const TrialSummary& s);

/// Compares the trials (`summaries` in the order of `trials.trials`): numbers, kinetics per
/// temperature on the 3-D mean radius where every trial of the temperature has it (the LSW
/// constant is for 3-D radii), else on the resolved sections' mean radius, the Arrhenius fit,
/// and the rankings.
ScreenComparison compare_trials(const TrialsConfig& trials, const std::vector<TrialSummary>& summaries);

/// Where trial `trial` stands in a ranking: its rank from 1 (0 when absent) and the entry.
std::pair<size_t, const Ranked*> place_in(const std::vector<Ranked>& ranking, size_t trial);

}  // namespace orderband
