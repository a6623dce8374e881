// Orientation bias of the fraction stage: pure-γ grains of many orientations should all give f ≈ 0.
// usage: orientation_bias_bench [GRAINS=12] [SIDE=48] [COUNTS=5000] [PAIR=ni] [PX=60] [SEED=3]
// env: ORDERBAND_BENCH_TRUTHORI (orientations from the truth CSV), _JITTER (per-point orientation noise, deg),
//      _OFFSET (one common orientation error, deg), _KERNEL (kernel radius, steps), _PCERR (px added to PC x, y and
//      distance), _FALLOFF (background falloff), _BEAM (beam sigma, nm), _PRIMARY (primary area fraction, own
//      orientation); every name with the ORDERBAND_BENCH prefix.
#include <algorithm>
#include <array>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <random>

#include "orderband/npy_io.hpp"
#include "orderband/ordered_fraction.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/synth.hpp"
#include "orderband/synth_scan.hpp"
#include "orderband/units.hpp"

using namespace orderband;

namespace {
const char* env_or(const char* name, const char* fallback) {
  const char* v = std::getenv(name);
  return v ? v : fallback;
}
}  // namespace

int main(int argc, char** argv) {
  const int grains = argc > 1 ? std::atoi(argv[1]) : 12;
  const int side = argc > 2 ? std::atoi(argv[2]) : 48;
  const double counts = argc > 3 ? std::atof(argv[3]) : 5000;
  const std::string pair = argc > 4 ? argv[4] : "ni";
  const int px = argc > 5 ? std::atoi(argv[5]) : 60;
  const int seed = argc > 6 ? std::atoi(argv[6]) : 3;
  const std::string dir = (std::filesystem::temp_directory_path() / "orderband-bias-bench").string();
  std::filesystem::create_directories(dir);
  const double primary = std::atof(env_or("ORDERBAND_BENCH_PRIMARY", "0"));
  std::ofstream(dir + "/s.toml") << "[scenario]\nseed = " << seed << "\n[scan]\nrows = " << side << "\ncols = " << side
                                 << "\nstep_um = 0.025\n[detector]\nwidth_px = " << px << "\nheight_px = " << px
                                 << "\npc_px = [" << px / 2.0 << ", " << 0.3 * px << "]\ndistance_px = " << 0.75 * px
                                 << "\n[phases]\npair = \"" << pair
                                 << "\"\n[patterns]\nbackground_falloff = " << env_or("ORDERBAND_BENCH_FALLOFF", "0.5")
                                 << "\nbeam_sigma_nm = " << env_or("ORDERBAND_BENCH_BEAM", "10")
                                 << "\ncounts_per_px = " << counts << "\n[grains]\ncount = " << grains << "\n"
                                 << (primary > 0 ? "[primary]\narea_fraction = " + std::to_string(primary) +
                                                       "\ndistribution = \"fixed\"\ndiameter_um = 0.45\n"
                                                       "own_orientation = true\n"
                                                 : std::string());
  write_synthetic_scan(read_synth_scenario(dir + "/s.toml"), dir + "/scan", "orientation_bias_bench");
  ScanConfig config = read_scan_config(dir + "/scan/scan.toml");
  if (const char* pc = std::getenv("ORDERBAND_BENCH_PCERR")) {  // a pattern-centre error (px in x, y and distance)
    const double e = std::atof(pc);
    config.geometry.pc_px += Eigen::Vector2d(e, e);
    config.geometry.distance_px += e;
  }
  if (std::getenv("ORDERBAND_BENCH_TRUTHORI")) {
    config.orientations.source = OrientationSourceKind::file;
    config.orientations.file = dir + "/scan/truth_orientations.csv";
    config.orientations.refine = false;
  }
  OrientationResults ori = orient_scan(read_scan_inputs(config, InputHashing::skip));
  if (const char* jitter = std::getenv("ORDERBAND_BENCH_JITTER")) {  // random per-point orientation errors (deg)
    std::mt19937_64 rng(7);
    std::normal_distribution<double> normal(0, deg_to_rad(std::atof(jitter)));
    for (auto& o : ori.orientation)
      if (o) {
        const Eigen::Vector3d v(normal(rng), normal(rng), normal(rng));
        *o = Rotation::from_axis_angle(v, v.norm()) * *o;
      }
  }
  const auto t0 = std::chrono::steady_clock::now();
  if (const char* offset = std::getenv("ORDERBAND_BENCH_OFFSET")) {  // one common orientation error (deg)
    const Eigen::Vector3d axis = Eigen::Vector3d(1, 2, 3).normalized();
    for (auto& o : ori.orientation)
      if (o) *o = Rotation::from_axis_angle(axis, deg_to_rad(std::atof(offset))) * *o;
  }
  FractionSpec spec;
  if (const char* r = std::getenv("ORDERBAND_BENCH_KERNEL")) spec.orientation_kernel_radius = std::atoi(r);
  const FractionResults fr = ordered_fraction_scan(read_scan_inputs(config, InputHashing::skip), ori, spec);
  const double sec = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  const NpyArray truth = read_npy(dir + "/scan/truth_fraction.npy");
  const NpyArray truth_grain = read_npy(dir + "/scan/truth_grains.npy");
  const ScanGrid& grid = config.grid;
  // Per truth grain: mean unclipped f over all pure points and over points ≥ 2 steps from another grain.
  std::map<int, std::array<double, 4>> by_grain;
  for (size_t k = 0; k < grid.count(); ++k) {
    if (fr.reason[k] || (truth.values[k] != 0.0f && truth.values[k] != 1.0f)) continue;
    const int g = static_cast<int>(truth_grain.values[k]);
    bool interior = true;
    const GridPoint p = grid.point(k);
    for (int di = -2; di <= 2; ++di)
      for (int dj = -2; dj <= 2; ++dj) {
        const GridPoint q{p.row + di, p.col + dj};
        if (q.row < 0 || q.col < 0 || q.row >= grid.rows || q.col >= grid.cols) continue;
        interior = interior && static_cast<int>(truth_grain.values[grid.index(q)]) == g;
      }
    auto& a = by_grain[g];
    a[0] += fr.raw[k], a[1] += 1;
    if (interior) a[2] += fr.raw[k], a[3] += 1;
  }
  std::printf(
      "pattern centre: %s from %d grains, (%.3f, %.3f) px, distance %.3f px (scenario: (%.3f, %.3f), %.3f); "
      "mean correlation %.4f -> %.4f\n",
      fr.pattern_centre_refined ? "refined" : "kept", fr.pattern_centre_grains, fr.geometry.pc_px.x(),
      fr.geometry.pc_px.y(), fr.geometry.distance_px, px / 2.0, 0.3 * px, 0.75 * px,
      fr.pattern_centre_correlation_before, fr.pattern_centre_correlation_after);
  double worst = 0;
  for (const auto& [g, a] : by_grain) {
    if (a[1] < 30) continue;
    std::printf("truth grain %3d (%s): mean f %+.4f over %4.0f points, interior %+.4f over %4.0f\n", g,
                g < grains ? "gamma" : "own-orientation gamma-prime", a[0] / a[1], a[1], a[3] ? a[2] / a[3] : NAN,
                a[3]);
    if (g < grains) worst = std::max(worst, std::abs(a[0] / a[1]));
  }
  std::printf(
      "%s pair, %d grains, %.0f counts/px: largest |mean f| of a pure-gamma grain %.4f; fraction stage %.0f "
      "points/s\n",
      pair.c_str(), grains, counts, worst, grid.count() / sec);
  std::filesystem::remove_all(dir);
  return 0;
}
