// Pattern files: raw stacks, HDF5 datasets and image folders opened as pattern sources.
#pragma once

#include <memory>

#include "orderband/pattern_source.hpp"
#include "orderband/scan_grid.hpp"

namespace orderband {

/// Opens a source and checks it holds exactly grid.count() patterns
/// (a shorter raw file, a dataset of the wrong rank or shape, missing image
/// files are errors that name the file, the value and the fix).
std::unique_ptr<PatternSource> open_pattern_source(const PatternSourceSpec& spec, const ScanGrid& grid);

}  // namespace orderband
