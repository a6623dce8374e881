// Writing the orientation stage's results: CSV, maps (.npy), pictures (PNG), summary (JSON).
#pragma once

#include <string>
#include <vector>

#include "orderband/orient.hpp"
#include "orderband/results_file.hpp"

namespace orderband {

/// Writes into `folder` (created if needed), every file atomically:
/// orientations.csv, point_status.npy, grain_ids.npy, bands_matched.npy,
/// fit_residual_deg.npy, model_correlation.npy, kam_deg.npy,
/// orientation_map.png (inverse-pole-figure colours along the sample
/// normal z_S, with the key beside the map and a µm scale bar),
/// grain_map.png and orient_summary.json (counts, grains, parameters). The phase column of
/// orientations.csv is `phases[k]` for every point with an orientation (`orient`: the indexed
/// parent; `map`: the phase the point's measured ordered fraction shows).
void write_orientation_outputs(const std::string& folder, const ScanConfig& config, const OrientationResults& results,
                               const OrientSpec& spec, const std::vector<std::string>& phases,
                               const std::string& command_line);

/// The orientation stage's per-point arrays with units and descriptions (point_status, grain_ids,
/// bands_matched, fit_residual_deg, model_correlation, kam_deg).
std::vector<PointArray> orientation_arrays(const OrientationResults& results);

/// The inverse-pole-figure map with its key and scale bar (white where no orientation).
RgbImage orientation_map_image(const ScanGrid& grid, const OrientationResults& results);

}  // namespace orderband
