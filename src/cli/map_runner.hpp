// Running `map` on one scan with progress and resume, shared by the map, demo and screen commands.
#pragma once

#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "orderband/map_scan.hpp"
#include "orderband/process_share.hpp"

namespace orderband::cli {

struct MapRunOptions {
  double threshold = 0.5;
  bool otsu = false;
  int connectivity = 8;
  int min_particle = 0;          ///< 0: from the detection limit
  double split_elongated = 1.7;  ///< aspect ratio from which an outline is cut into two sections; 0: off
  std::vector<double> class_bounds{0.1, 1.0};
  double grain_threshold = 5.0;
  bool index_every_point = false;  ///< no orientations from the row above (OrientSpec::from_neighbours)
  std::string end_members = "model";
  std::string estimator = "auto";  ///< "auto" (learned from 1,000 points), "model" or "learned"
  bool no_mean_spheres = false;
};

void add_map_options(CLI::App& sub, MapRunOptions& o);
MapOptions to_map_options(const MapRunOptions& o);
/// The run key of these options on these inputs (map_run_key).
std::string map_key(const ScanInputs& inputs, const MapRunOptions& o);
/// Runs every stage with a progress bar and a resume store in folder/.resume; writes the outputs.
/// Shared among the processes of a launch (`share`), only rank 0 draws progress and warns.
MapResults run_map(const ScanInputs& inputs, const std::string& folder, const MapRunOptions& o, bool quiet,
                   const ProcessShare& share = {});

}  // namespace orderband::cli
