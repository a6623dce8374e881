// The outputs of `map`: maps, tables, figures, the summary and the report page.
#pragma once

#include <string>

#include "orderband/map_scan.hpp"
#include "orderband/scan_config.hpp"
#include "orderband/scan_inputs.hpp"

namespace orderband {

/// Writes every output of `map` into `folder` (see README: outputs of map), each atomically,
/// with the tool version, the command line, the input files' hashes and the parameters.
void write_map_outputs(const std::string& folder, const ScanConfig& config, const MapResults& results,
                       const MapOptions& options, const std::string& command_line);

/// For a run in which no point gave an ordered fraction: summary.json alone, saying so (the
/// sentence of no_usable_point_sentence, the points by reason), with the provenance and parameters.
void write_unmeasured_summary(const std::string& folder, const ScanConfig& config, const MapResults& results,
                              const MapOptions& options, const std::string& command_line);

/// Every parameter of a run on these inputs, as the summary records them (JSON text): the
/// options as applied (options_for_scan) and the description's own settings.
std::string map_parameters_text(const ScanInputs& inputs, const MapOptions& options);

}  // namespace orderband
