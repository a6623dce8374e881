// Screening trials, shared by the screen and demo commands.
#pragma once

#include <string>
#include <vector>

#include "map_runner.hpp"

namespace orderband::cli {

struct ScreenOutcome {
  std::string report;
  std::vector<std::string> computed;  ///< trials mapped in this run (others were reused)
};

/// Maps every trial (reusing unchanged ones), compares, fits the kinetics, ranks, writes the report.
ScreenOutcome run_screen(const std::string& trials_path, const std::string& out, const MapRunOptions& run, bool quiet);

}  // namespace orderband::cli
