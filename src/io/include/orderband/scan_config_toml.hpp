// Scan descriptions as TOML files: read, validated and written back.
#pragma once

#include <ostream>
#include <string>

#include "orderband/scan_config.hpp"

namespace orderband {

/// Reads and validates a scan description (TOML). Unknown tables or keys,
/// wrong types and out-of-range values are errors naming the file, the key,
/// the value and the expected form.
ScanConfig read_scan_config(const std::string& path);
/// Same from text; `path` names it in messages and gives the base folder.
ScanConfig parse_scan_config(const std::string& toml_text, const std::string& path);

/// Writes a scan description that read_scan_config reads back to the same
/// values; paths are written relative to `relative_to` where possible.
void write_scan_config(std::ostream& os, const ScanConfig& config, const std::string& relative_to,
                       const std::string& header_comment = "");

}  // namespace orderband
