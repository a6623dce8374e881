// Shared `map` runner.
#include "map_runner.hpp"

#include <filesystem>
#include <fstream>
#include <memory>
#include <sstream>

#include "command.hpp"
#include "orderband/error.hpp"
#include "orderband/folder_lock.hpp"
#include "orderband/point_mask.hpp"
#include "orderband/version.hpp"
#include "progress.hpp"

namespace fs = std::filesystem;

namespace orderband::cli {

MapOptions to_map_options(const MapRunOptions& o) {
  MapOptions m;
  m.segment.method = o.otsu ? ThresholdMethod::otsu : ThresholdMethod::fixed;
  m.segment.threshold = o.threshold;
  m.segment.square_connectivity = o.connectivity;
  m.segment.min_points = o.min_particle;
  if (o.class_bounds.size() != 2 || !(o.class_bounds[0] > 0) || !(o.class_bounds[1] > o.class_bounds[0]))
    fail("--class-bounds needs two increasing positive ECDs in µm (secondary from, primary from)");
  m.classes.lower_um = {0.0, o.class_bounds[0], o.class_bounds[1]};
  m.orient.grains.threshold_deg = o.grain_threshold;
  m.fraction.end_members = o.end_members == "mixture" ? EndMemberMode::mixture : EndMemberMode::model;
  m.fraction.estimator = o.estimator == "learned" ? FractionEstimator::learned : FractionEstimator::profile;
  m.mean_spheres = !o.no_mean_spheres;
  return m;
}

std::string map_key(const ScanConfig& config, const MapRunOptions& o) {
  std::ostringstream k;
  k << kVersion << '|' << file_hash_fnv1a64(config.path) << '|'
    << (fs::is_directory(config.patterns.path) ? folder_hash_fnv1a64(config.patterns.path)
                                               : file_hash_fnv1a64(config.patterns.path))
    << '|'
    << (config.phases.pair_name.empty()
            ? file_hash_fnv1a64(config.phases.ordered_cif) + file_hash_fnv1a64(config.phases.disordered_cif)
            : config.phases.pair_name)
    << '|'
    << (config.orientations.source == OrientationSourceKind::file ? file_hash_fnv1a64(config.orientations.file)
                                                                  : "find")
    << '|' << (config.end_members.ordered_mask.empty() ? "" : file_hash_fnv1a64(config.end_members.ordered_mask)) << '|'
    << (config.end_members.disordered_mask.empty() ? "" : file_hash_fnv1a64(config.end_members.disordered_mask)) << '|'
    << o.threshold << o.otsu << o.connectivity << o.min_particle << o.class_bounds[0] << o.class_bounds[1]
    << o.grain_threshold << o.end_members << o.estimator << o.no_mean_spheres;
  return text_hash_fnv1a64(k.str());
}

MapResults run_map(const ScanConfig& config, const std::string& folder, const MapRunOptions& o, bool quiet) {
  MapOptions options = to_map_options(o);
  options.fraction.refine_pattern_centre = config.refine_pattern_centre;
  // The scan description's [fraction] end members, unless the command line asks for the mixture.
  if (o.end_members == "model" && config.end_members.mode != "model") {
    options.fraction.end_members =
        config.end_members.mode == "mixture" ? EndMemberMode::mixture : EndMemberMode::regions;
    auto rects = [](const std::vector<std::array<int, 4>>& in) {
      std::vector<PointRect> out;
      for (const auto& v : in) out.push_back({v[0], v[1], v[2], v[3]});
      return out;
    };
    options.fraction.ordered_regions = rects(config.end_members.ordered_regions);
    options.fraction.disordered_regions = rects(config.end_members.disordered_regions);
    if (!config.end_members.ordered_mask.empty())
      options.fraction.ordered_mask = read_point_mask(config.end_members.ordered_mask, config.grid);
    if (!config.end_members.disordered_mask.empty())
      options.fraction.disordered_mask = read_point_mask(config.end_members.disordered_mask, config.grid);
  }
  const FolderLock lock(folder);
  FolderRowStore store(folder + "/.resume", map_key(config, o));
  std::unique_ptr<ProgressReporter> bar;
  std::string current;
  auto progress = [&](const std::string& stage, size_t done, size_t total) {
    if (stage != current) {
      if (bar) bar->finish();
      current = stage;
      bar = std::make_unique<ProgressReporter>(stage, "points", quiet);
    }
    (*bar)(done, total);
  };
  MapResults r = map_scan(config, options, progress, &store);
  if (bar) bar->finish();
  if (!quiet && store.rows_found() > 0)
    std::fprintf(stderr, "resumed: %zu row results taken from the interrupted run\n", store.rows_found());
  if (!quiet && store.rows_damaged() > 0)
    std::fprintf(stderr, "resume: %zu damaged row results computed again\n", store.rows_damaged());
  for (const std::string& w : map_warnings(r)) std::fprintf(stderr, "orderband map: warning: %s\n", w.c_str());
  write_map_outputs(folder, config, r, options, command_line());
  store.clear();
  return r;
}

}  // namespace orderband::cli
