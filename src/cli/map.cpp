// `orderband map SCAN.toml -o OUT`: the whole per-scan analysis, resumable.
#include <cstdio>
#include <filesystem>
#include <memory>
#include <sstream>

#include "command.hpp"
#include "map_runner.hpp"
#include "mpi_session.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/version.hpp"

namespace orderband::cli {

void add_map_options(CLI::App& sub, MapRunOptions& o) {
  sub.add_option("--threshold", o.threshold, "fraction threshold for particles, in (0, 1)")
      ->check(finite_within(0, 1, true, true))
      ->capture_default_str();
  sub.add_flag("--otsu", o.otsu, "threshold particles by Otsu's method instead");
  sub.add_option("--connectivity", o.connectivity, "square grids: 4 or 8 (hexagonal grids use 6)")
      ->check(CLI::IsMember({4, 8}))
      ->capture_default_str();
  sub.add_option(
         "--min-particle", o.min_particle,
         "smallest particle in points; 0: from the detection limit (the size the map's noise alone rarely makes)")
      ->check(finite_within(0, 1e9, false, false))
      ->capture_default_str();
  sub.add_option("--split-elongated", o.split_elongated,
                 "aspect ratio from which a particle's outline is cut into two touching sections (sections of "
                 "near-equiaxed particles are near-circular); 0: off, for plates, rafts or needles")
      ->check(finite_within(0, 100, false, false))
      ->capture_default_str();
  sub.add_option("--class-bounds", o.class_bounds,
                 "lower ECD bounds of the secondary and primary classes (µm), e.g. 0.1 1.0")
      ->check(finite_within(0, 1000, true, false))
      ->expected(2);
  sub.add_option("--grain-threshold", o.grain_threshold, "misorientation that separates grains (°), in (0, 180]")
      ->check(finite_within(0, 180, true, false))
      ->capture_default_str();
  sub.add_flag("--index-every-point", o.index_every_point,
               "index every point from its bands (default: refine from the row above's orientations first and "
               "index only where none fits)");
  sub.add_option("--end-members", o.end_members,
                 "model, or mixture (rescale to the scan's two modes); reference regions come from the scan's "
                 "[fraction] table")
      ->check(CLI::IsMember({"model", "mixture"}))
      ->capture_default_str();
  sub.add_option("--estimator", o.estimator,
                 "auto (learned on scans of at least 1,000 points, model below), learned (the response to ordering "
                 "learned from the scan; sub-resolution ordering counts as matrix unless reference regions are set) "
                 "or model (the kinematic model's references of both phases)")
      ->check(CLI::IsMember({"auto", "model", "learned"}))
      ->capture_default_str();
  sub.add_flag("--no-mean-spheres", o.no_mean_spheres, "skip the mean-sphere pass and images");
}

std::function<int()> setup_map(CLI::App& sub) {
  struct Options {
    std::string scan, out;
    int threads = 0;
    bool quiet = false;
    MapRunOptions run;
  };
  auto o = std::make_shared<Options>();
  sub.add_option("scan", o->scan, "scan description (TOML)")->required();
  sub.add_option("-o,--output", o->out, "output folder (default: the scan's [output] folder)");
  add_threads_option(sub, o->threads);
  sub.add_flag("--quiet", o->quiet, "no progress on stderr");
  add_map_options(sub, o->run);
  return [o]() {
    apply_threads(o->threads);
    const ScanConfig config = read_scan_config(o->scan);
    const std::string folder = o->out.empty() ? config.output_folder : o->out;
    const ProcessShare share = mpi_session().process_share();
    run_map(read_scan_inputs(config), folder, o->run, o->quiet, share);
    if (!o->quiet && share.rank == 0) std::fprintf(stderr, "report: %s/report.html\n", folder.c_str());
    return 0;
  };
}

}  // namespace orderband::cli
