// Shared `map` runner.
#include "map_runner.hpp"

#include <functional>
#include <limits>

#include "command.hpp"
#include "orderband/error.hpp"
#include "orderband/map_folder.hpp"
#include "progress.hpp"

namespace orderband::cli {

MapOptions to_map_options(const MapRunOptions& o) {
  MapOptions m;
  m.segment.method = o.otsu ? ThresholdMethod::otsu : ThresholdMethod::fixed;
  m.segment.threshold = o.threshold;
  m.segment.square_connectivity = o.connectivity;
  m.segment.min_points = o.min_particle;
  if (o.split_elongated > 0 && o.split_elongated < 1.2)
    fail(
        "--split-elongated must be 0 (off) or at least 1.2 (a single disc's outline on the grid reads up to 1.33 at 2 "
        "steps' radius and 1.12 at 4, computed, so values below about 1.4 cut round sections), got ",
        o.split_elongated);
  m.segment.split_elongated_aspect =
      o.split_elongated > 0 ? o.split_elongated : std::numeric_limits<double>::infinity();
  if (o.class_bounds.size() != 2 || !(o.class_bounds[0] > 0) || !(o.class_bounds[1] > o.class_bounds[0]))
    fail("--class-bounds needs two increasing positive ECDs in µm (secondary from, primary from)");
  m.classes.lower_um = {0.0, o.class_bounds[0], o.class_bounds[1]};
  m.orient.grains.threshold_deg = o.grain_threshold;
  m.orient.from_neighbours = !o.index_every_point;
  m.fraction.end_members = o.end_members == "mixture" ? EndMemberMode::mixture : EndMemberMode::model;
  m.fraction.estimator = o.estimator == "learned" ? FractionEstimator::learned
                         : o.estimator == "model" ? FractionEstimator::profile
                                                  : FractionEstimator::automatic;
  estimator_in_use(m.fraction, 0);  // refuses a combination it cannot run before any work starts
  m.mean_spheres = !o.no_mean_spheres;
  return m;
}

std::string map_key(const ScanInputs& inputs, const MapRunOptions& o) { return map_run_key(inputs, to_map_options(o)); }

MapResults run_map(const ScanInputs& inputs, const std::string& folder, const MapRunOptions& o, bool quiet,
                   const ProcessShare& share) {
  quiet = quiet || share.rank != 0;
  StageBars bars("points", quiet);
  MapFolderRun run =
      map_to_folder(inputs, folder, to_map_options(o), map_key(inputs, o), command_line(), std::ref(bars), share);
  bars.finish();
  if (share.rank != 0) return std::move(run.results);
  if (!quiet && run.rows_resumed > 0)
    std::fprintf(stderr, "resumed: %zu row results taken from the interrupted run\n", run.rows_resumed);
  if (!quiet && run.rows_damaged > 0)
    std::fprintf(stderr, "resume: %zu damaged row results computed again\n", run.rows_damaged);
  for (const std::string& w : map_warnings(run.results))
    std::fprintf(stderr, "orderband map: warning: %s\n", w.c_str());
  return std::move(run.results);
}

}  // namespace orderband::cli
