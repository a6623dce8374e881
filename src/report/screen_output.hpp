// The outputs of `screen` (report layer, internal): comparison tables, charts, the report page.
#pragma once

#include <string>
#include <vector>

#include "orderband/screen_folder.hpp"

namespace orderband {

/// Writes comparison.csv, comparison.json, the four charts (SVG) and report.html into `out`.
/// `summary_texts` are the compared trials' summary.json texts (their class tables and 3-D fits
/// go into comparison.json as they are).
void write_screen_outputs(const std::string& out, const ScreenRun& run, const std::vector<std::string>& summary_texts,
                          const std::string& command_line);

}  // namespace orderband
