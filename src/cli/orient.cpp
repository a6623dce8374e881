// `orderband orient SCAN.toml -o DIR`: orientations, grains and their maps.
#include <cstdio>
#include <memory>

#include "command.hpp"
#include "orderband/folder_lock.hpp"
#include "orderband/orient_output.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "progress.hpp"

namespace orderband::cli {

std::function<int()> setup_orient(CLI::App& sub) {
  struct Options {
    std::string scan, out;
    int threads = 0;
    bool quiet = false;
    double grain_threshold = 5.0;
    int min_grain = 4;
    bool index_every_point = false;
  };
  auto o = std::make_shared<Options>();
  sub.add_option("scan", o->scan, "scan description (TOML)")->required();
  sub.add_option("-o,--output", o->out, "output folder (default: the scan's [output] folder)");
  sub.add_option("--grain-threshold", o->grain_threshold, "misorientation that separates grains (°), in (0, 180]")
      ->check(finite_within(0, 180, true, false))
      ->capture_default_str();
  sub.add_option("--min-grain", o->min_grain,
                 "smallest grain (points, at least 1); smaller ones merge into a neighbour")
      ->check(finite_within(1, 1e9, false, false))
      ->capture_default_str();
  sub.add_flag("--index-every-point", o->index_every_point,
               "index every point from its bands (default: refine from the row above's orientations first and "
               "index only where none fits)");
  add_threads_option(sub, o->threads);
  sub.add_flag("--quiet", o->quiet, "no progress on stderr");
  return [o]() {
    apply_threads(o->threads);
    const ScanConfig config = read_scan_config(o->scan);
    const ScanInputs inputs = read_scan_inputs(config, InputHashing::skip);
    OrientSpec spec;
    spec.grains.threshold_deg = o->grain_threshold;
    spec.grains.min_points = o->min_grain;
    spec.from_neighbours = !o->index_every_point;
    const std::string folder = o->out.empty() ? config.output_folder : o->out;
    const FolderLock lock(folder);
    ProgressReporter progress("orient", "points", o->quiet);
    const OrientationResults r = orient_scan(inputs, spec, [&](size_t d, size_t t) { progress(d, t); });
    progress.finish();
    // Orientations alone cannot tell the phases apart: every point carries the indexed parent.
    const std::vector<std::string> phases(config.grid.count(), inputs.phases.disordered.name);
    write_orientation_outputs(folder, config, r, spec, phases, command_line());
    if (!o->quiet)
      std::fprintf(stderr, "orientations for %zu of %zu points (%zu usable), %d grains; written to %s\n",
                   r.with_orientation(), config.grid.count(), r.usable(), r.grains.count(), folder.c_str());
    return 0;
  };
}

}  // namespace orderband::cli
