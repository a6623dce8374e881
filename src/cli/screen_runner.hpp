// Screening trials from the command line, shared by the screen and demo commands.
#pragma once

#include <string>

#include "map_runner.hpp"
#include "orderband/screen_folder.hpp"

namespace orderband::cli {

/// screen_to_folder with progress bars and messages on stderr (failures and warnings also when
/// quiet), its trials shared as `share` says.
ScreenRun run_screen(const std::string& trials_path, const std::string& out, const MapRunOptions& run, bool quiet,
                     const ProcessShare& share = {});

}  // namespace orderband::cli
