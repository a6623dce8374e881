// Benchmark and accuracy check of the fraction stage on a synthetic scan with truth.
// usage: fraction_bench [COUNTS=5000] [SIDE=48] [NEIGHBOUR_SIGMA=0] [TERTIARY=0] [PAIR=ni] [PX=60] [DISTANCE=0.75 PX]
#include <array>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>

#include "orderband/npy_io.hpp"
#include "orderband/ordered_fraction.hpp"
#include "orderband/orientation_csv.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/synth.hpp"
#include "orderband/synth_scan.hpp"

using namespace orderband;

int main(int argc, char** argv) {
  const double counts = argc > 1 ? std::atof(argv[1]) : 5000;
  const int side = argc > 2 ? std::atoi(argv[2]) : 48;
  const double neighbour = argc > 3 ? std::atof(argv[3]) : 0;
  const double tertiary = argc > 4 ? std::atof(argv[4]) : 0;
  const std::string pair = argc > 5 ? argv[5] : "ni";
  const int px = argc > 6 ? std::atoi(argv[6]) : 60;
  const double distance = argc > 7 ? std::atof(argv[7]) : 0.75 * px;
  const std::string dir = (std::filesystem::temp_directory_path() / "orderband-fraction-bench").string();
  std::filesystem::create_directories(dir);
  std::ofstream(dir + "/s.toml")
      << "[scenario]\nseed = " << (std::getenv("ORDERBAND_BENCH_SEED") ? std::getenv("ORDERBAND_BENCH_SEED") : "5")
      << "\n[scan]\nrows = " << side << "\ncols = " << side << "\nstep_um = 0.025\n[detector]\nwidth_px = " << px
      << "\nheight_px = " << px << "\npc_px = [" << px / 2.0 << ", " << 0.3 * px << "]\ndistance_px = " << distance
      << "\n[phases]\npair = \"" << pair << "\"\n[patterns]\nbackground_falloff = "
      << (std::getenv("ORDERBAND_BENCH_FALLOFF") ? std::getenv("ORDERBAND_BENCH_FALLOFF") : "0.5")
      << "\ncounts_per_px = " << counts
      << "\n[grains]\ncount = 3\n[secondary]\narea_fraction = 0.3\n"
         "distribution = \"lognormal\"\nmedian_diameter_um = 0.15\nsigma_ln = 0.2\n[tertiary]\nfraction = "
      << tertiary << "\n";
  write_synthetic_scan(read_synth_scenario(dir + "/s.toml"), dir + "/scan", "fraction_bench");
  ScanConfig config = read_scan_config(dir + "/scan/scan.toml");
  config.preprocess.neighbour_sigma_steps = neighbour;
  if (std::getenv("ORDERBAND_BENCH_NOSTATIC")) config.preprocess.static_background = StaticBackgroundKind::none;
  if (std::getenv("ORDERBAND_BENCH_TRUTHORI")) {
    config.orientations.source = OrientationSourceKind::file;
    config.orientations.file = dir + "/scan/truth_orientations.csv";
    config.orientations.refine = false;
  }
  const OrientationResults ori = orient_scan(read_scan_inputs(config, InputHashing::skip));
  {
    std::ifstream tin(dir + "/scan/truth_orientations.csv");
    const OrientationTable truth_o = read_orientation_csv(tin, config.grid, "truth");
    const CrystalSymmetry cubic = CrystalSymmetry::cubic();
    std::vector<double> e;
    for (size_t k = 0; k < config.grid.count(); ++k)
      if (ori.orientation[k])
        e.push_back(cubic.misorientation_angle(*ori.orientation[k], *truth_o.orientations[k]) * 180 / M_PI);
    std::sort(e.begin(), e.end());
    std::printf("orientation error: median %.3f, 95th %.3f, 99th %.3f deg; grains %d\n", e[e.size() / 2],
                e[e.size() * 95 / 100], e[e.size() * 99 / 100], ori.grains.count());
  }
  const auto t0 = std::chrono::steady_clock::now();
  FractionSpec fspec;
  if (std::getenv("ORDERBAND_BENCH_LEARNED")) fspec.estimator = FractionEstimator::learned;
  const FractionResults fr = ordered_fraction_scan(read_scan_inputs(config, InputHashing::skip), ori, fspec);
  const double sec = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  const NpyArray truth = read_npy(dir + "/scan/truth_fraction.npy");
  const ScanGrid& grid = config.grid;
  size_t inner = 0, correct = 0;
  double s0 = 0, s1 = 0, ss0 = 0, ss1 = 0;
  int n0 = 0, n1 = 0;
  for (size_t k = 0; k < grid.count(); ++k) {
    if (fr.reason[k]) continue;
    const bool t = truth.values[k] >= 0.5;
    bool boundary = false;
    for (const GridPoint& nb : grid.neighbours(grid.point(k), 8))
      boundary = boundary || ((truth.values[grid.index(nb)] >= 0.5) != t);
    if (boundary) continue;
    ++inner;
    correct += (fr.fraction[k] >= 0.5) == t;
    (t ? s1 : s0) += fr.raw[k];
    (t ? ss1 : ss0) += fr.raw[k] * fr.raw[k];
    (t ? n1 : n0) += 1;
  }
  if (std::getenv("ORDERBAND_BENCH_DETAIL")) {
    std::map<int, std::array<double, 4>> by_grain;  // sum γ, n γ, sum γ′, n γ′
    for (size_t k = 0; k < grid.count(); ++k) {
      if (fr.reason[k] || (truth.values[k] > 0.02 && truth.values[k] < 0.98)) continue;
      auto& a = by_grain[ori.grains.id[k]];
      if (truth.values[k] <= 0.02)
        a[0] += fr.raw[k], a[1] += 1;
      else
        a[2] += fr.raw[k], a[3] += 1;
    }
    for (auto& [g, a] : by_grain)
      std::printf("grain %d: pure gamma mean %.3f (%g pts), pure gamma-prime mean %.3f (%g pts)\n", g, a[0] / a[1],
                  a[1], a[2] / a[3], a[3]);
  }
  double truth_mean = 0;
  for (float v : truth.values) truth_mean += v / truth.values.size();
  const double m0 = s0 / n0, m1 = s1 / n1, sd0 = std::sqrt(ss0 / n0 - m0 * m0), sd1 = std::sqrt(ss1 / n1 - m1 * m1);
  std::printf("%s pair, %d x %d points, %.0f counts/px, neighbour sigma %.2g: fraction stage %.2f s (%.0f points/s)\n",
              pair.c_str(), side, side, counts, neighbour, sec, grid.count() / sec);
  std::printf("classification away from phase boundaries: %.2f %% of %zu points\n", 100.0 * correct / inner, inner);
  std::printf("inner gamma: mean %.3f sd %.3f; inner gamma-prime: mean %.3f sd %.3f; d' = %.1f\n", m0, sd0, m1, sd1,
              (m1 - m0) / std::sqrt(0.5 * (sd0 * sd0 + sd1 * sd1)));
  std::printf("scan mean fraction %.4f, truth %.4f (difference %+.4f)\n", fr.mean_raw(), truth_mean,
              fr.mean_raw() - truth_mean);
  std::printf("sub-resolution fraction %.4f +- %.4f over %zu matrix points (scenario %.3f)\n",
              fr.subresolution_fraction, fr.subresolution_se, fr.subresolution_points, tertiary);
  for (const auto& f : fr.families)
    std::printf("  %-6s %s weight %.3f separation %.2f levels %.4f / %.4f\n", f.label.c_str(),
                f.superlattice ? "S" : "F", f.weight, f.separation, f.disordered_level, f.ordered_level);
  if (std::getenv("ORDERBAND_BENCH_DETAIL"))
    for (const auto& f : fr.families) {
      if (f.label != "{100}" && f.label != "{320}" && f.label != "{111}") continue;
      std::printf("%s profile (u: disordered, ordered):\n", f.label.c_str());
      for (size_t b = 0; b < f.profile_u.size(); b += 2)
        std::printf("  %+.2f: %.4f %.4f\n", f.profile_u[b], f.profile_disordered[b], f.profile_ordered[b]);
    }
  std::filesystem::remove_all(dir);
  return 0;
}
