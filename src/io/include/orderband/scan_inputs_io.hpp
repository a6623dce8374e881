// Reading one scan's inputs from the files its description names.
#pragma once

#include <map>
#include <string>

#include "orderband/scan_inputs.hpp"

namespace orderband {

enum class InputHashing { hash, skip };

/// Opens the pattern source (checked against the grid), loads the phase pair, and reads the
/// orientation table, the [fraction] point masks and the preprocessing images the description
/// names. Every problem is an orderband::Error naming the file. `hashing = skip` leaves
/// input_hash empty (a quick check need not read the whole stack).
ScanInputs read_scan_inputs(const ScanConfig& config, InputHashing hashing = InputHashing::hash);

/// The hash of every input file of a description (ScanInputs::input_hash).
std::string scan_input_hash(const ScanConfig& config);
/// Each input file's own hash by path (ScanInputs::file_hashes; a folder: its files' hash).
std::map<std::string, std::string> input_file_hashes(const ScanConfig& config);

}  // namespace orderband
