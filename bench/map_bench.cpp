// Benchmark: the whole map chain on a demo-like synthetic scan; points per second and peak memory.
// usage: map_bench [SIDE=96] [PX=60]   (96: the demo's size; 192: four times as many points; PX: the
// pattern width and height, the pattern centre and distance scaled with it)
#include <sys/resource.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>

#include "orderband/map_output.hpp"
#include "orderband/map_scan.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/synth.hpp"
#include "orderband/synth_scan.hpp"

using namespace orderband;

int main(int argc, char** argv) {
  const int side = argc > 1 ? std::atoi(argv[1]) : 96;
  const int px = argc > 2 ? std::atoi(argv[2]) : 60;
  const std::string dir = (std::filesystem::temp_directory_path() / "orderband-map-bench").string();
  std::filesystem::create_directories(dir);
  std::ofstream(dir + "/s.toml") << "[scenario]\nseed = 9\n[scan]\nrows = " << side << "\ncols = " << side
                                 << "\nstep_um = 0.025\n[detector]\nwidth_px = " << px << "\nheight_px = " << px
                                 << "\npc_px = [" << 0.5 * px << ", " << 0.3 * px << "]\ndistance_px = " << 0.75 * px
                                 << "\n[grains]\ncount = 4\n[secondary]\narea_fraction = 0.3\n"
                                    "distribution = \"lsw\"\nmean_diameter_um = 0.15\n";
  write_synthetic_scan(read_synth_scenario(dir + "/s.toml"), dir + "/scan", "map_bench");
  struct rusage before {};
  getrusage(RUSAGE_SELF, &before);
  const ScanConfig config = read_scan_config(dir + "/scan/scan.toml");
  const ScanInputs inputs = read_scan_inputs(config, InputHashing::skip);
  // Every point indexed (as before orientations came from the row above first; the reference), then
  // the default.
  double reference_rate = 0;
  for (const bool from_neighbours : {false, true}) {
    MapOptions options;
    options.orient.from_neighbours = from_neighbours;
    const auto t0 = std::chrono::steady_clock::now();
    const MapResults r = map_scan(inputs, options);
    const double s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    write_map_outputs(dir + "/out", config, r, r.options, "map_bench");
    struct rusage after {};
    getrusage(RUSAGE_SELF, &after);
    const double rate = side * side / s;
    if (!from_neighbours) reference_rate = rate;
    std::printf(
        "%s: %d x %d points (%d x %d px patterns, %.0f MB of patterns): map chain %.1f s, %.0f points/s (%.2f x every "
        "point indexed); area fraction %.4f; peak resident memory %.0f MB (after synthesis: %.0f MB)\n",
        from_neighbours ? "orientations from the row above first" : "every point indexed", side, side, px, px,
        side * side * px * px * 2 / 1e6, s, rate, rate / reference_rate, r.ordered_area_fraction(),
        after.ru_maxrss / 1024.0, before.ru_maxrss / 1024.0);
  }
  std::filesystem::remove_all(dir);
  return 0;
}
