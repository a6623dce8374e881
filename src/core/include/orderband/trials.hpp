// Heat-treatment trials: their description, the target window, and the ranking against it.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "orderband/particles.hpp"  // kFewParticles

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

/// A measured quantity with its 95 % interval (low = high = value when none is known).
struct Measured {
  double value = 0, low = 0, high = 0;
};

/// What a trial measured, for the ranking. The secondary size is the mean diameter of all sections
/// (resolved or not) from the truncated-section fit when it is determined, else the mean of the
/// resolved sections (biased high; then `secondary_size_from_fit` is false).
struct TrialNumbers {
  Measured ordered_fraction;
  Measured secondary_mean_ecd_um;
  bool secondary_size_from_fit = false;
  double primary_fraction = 0;
  int primary_count = 0, secondary_count = 0;  ///< counted particles (a field too small for a class shows here)
};

/// Where a trial stands against the window: every quantity inside, outside, or undecided (its
/// interval straddles an edge of the window).
enum class Verdict { inside, undecided, outside };
const char* to_string(Verdict v);

struct Ranked {
  size_t trial = 0;  ///< index into the trials
  Verdict verdict = Verdict::inside;
  double distance = 0;               ///< 0 inside the window; else the sum of relative misses of the values
  std::vector<std::string> reasons;  ///< why it misses or is undecided (empty: inside)
  std::vector<std::string> flags;    ///< fields too small for a class, sizes not from the fit
};

/// Orders trials: decided inside first, then undecided, then outside; within each by the distance
/// of the values to the window (each quantity outside its range adds |miss| / range width, or the
/// bound itself for a one-sided limit); ties keep the input order. A class with fewer than
/// `min_class_count` counted particles is flagged.
std::vector<Ranked> rank_trials(const std::vector<TrialNumbers>& numbers, const TargetWindow& target,
                                int min_class_count = kFewParticles);

}  // namespace orderband
