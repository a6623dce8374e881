// The outputs of `map`: maps, tables, figures, the summary and the report page.
#pragma once

#include <string>

#include "orderband/map_scan.hpp"
#include "orderband/scan_config.hpp"

namespace orderband {

/// Writes every output of `map` into `folder` (see README: outputs of map), each atomically,
/// with the tool version, the command line, the input files' hashes and the parameters.
void write_map_outputs(const std::string& folder, const ScanConfig& config, const MapResults& results,
                       const MapOptions& options, const std::string& command_line);

}  // namespace orderband
