// Heat-treatment trials: their description, the target window, and the ranking against it.
#pragma once

#include <optional>
#include <string>
#include <vector>

namespace orderband {

struct Trial {
  std::string label;
  std::string scan;      ///< scan description (absolute), or empty when a scenario is given
  std::string scenario;  ///< synthetic scenario (absolute): made into a scan in the cache first
  double temperature_c = 0;
  double time_h = 0;
  std::string notes;
};

struct TargetWindow {
  std::optional<std::pair<double, double>> ordered_fraction;       ///< [low, high]
  std::optional<std::pair<double, double>> secondary_mean_ecd_um;  ///< [low, high]
  std::optional<double> max_primary_fraction;
};

struct TrialsConfig {
  std::string path, folder;
  std::string title;
  std::optional<double> exponent;  ///< coarsening exponent n; empty: fitted ("free")
  TargetWindow target;
  std::vector<Trial> trials;
};

/// Reads a trials description (TOML); one clear line per problem.
TrialsConfig read_trials_config(const std::string& path);

/// What a trial measured, for the ranking.
struct TrialNumbers {
  double ordered_fraction = 0;
  double secondary_mean_ecd_um = 0;
  double primary_fraction = 0;
};

struct Ranked {
  size_t trial = 0;                  ///< index into the trials
  double distance = 0;               ///< 0 inside the window; else the sum of relative misses
  std::vector<std::string> reasons;  ///< why it misses (empty: inside)
};

/// Orders trials by their distance to the window: each quantity outside its range adds
/// |miss| / (range width, or the bound itself for a one-sided limit); ties keep the input order.
std::vector<Ranked> rank_trials(const std::vector<TrialNumbers>& numbers, const TargetWindow& target);

}  // namespace orderband
