// Screening trials, shared by the screen and demo commands.
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "map_runner.hpp"

namespace orderband::cli {

struct ScreenOutcome {
  std::string report;
  std::vector<std::string> computed;                        ///< trials mapped in this run (others were reused)
  std::vector<std::pair<std::string, std::string>> failed;  ///< (label, error) of trials whose map failed
};

/// Maps every trial (reusing unchanged ones), compares, fits the kinetics, ranks, writes the report.
/// A trial that fails is logged, listed in the report and comparison.json and left out of the
/// comparison; the others go on (an error only if every trial fails).
ScreenOutcome run_screen(const std::string& trials_path, const std::string& out, const MapRunOptions& run, bool quiet);

}  // namespace orderband::cli
