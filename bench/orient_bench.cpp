// Benchmark and accuracy check of the orientation stage on a synthetic scan.
// usage: orient_bench [PATTERN_PX=60] [SIDE=40] [COUNTS=5000]
// Target (issue Step 5): ≥ 500 points/s for find + refine at 60 × 60 px on 2 cores.
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>

#include "orderband/orient.hpp"
#include "orderband/orientation_csv.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/synth.hpp"
#include "orderband/synth_scan.hpp"
#include "orderband/units.hpp"

using namespace orderband;

namespace {

/// Accuracy against the truth, grains and the points' status.
void report(const OrientationResults& r, const ScanConfig& config, const OrientationTable& truth,
            const SynthScenario& s, int side, int px, double counts, double sec) {
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  std::vector<double> err;
  size_t within2 = 0, usable = 0;
  for (size_t k = 0; k < config.grid.count(); ++k) {
    if (r.status[k] == static_cast<uint8_t>(PointStatus::unusable_pattern)) continue;
    ++usable;
    if (!r.orientation[k]) continue;
    const double e = rad_to_deg(cubic.misorientation_angle(*r.orientation[k], *truth.orientations[k]));
    err.push_back(e);
    within2 += e < 2;
  }
  std::sort(err.begin(), err.end());
  auto pct = [&](double p) { return err.empty() ? NAN : err[static_cast<size_t>(p * (err.size() - 1))]; };
  std::printf("%d x %d points, %d x %d px, %.0f counts/px: %.1f s, %.0f points/s (find + refine + grains)\n", side,
              side, px, px, counts, sec, config.grid.count() / sec);
  std::printf("found within 2 deg: %zu of %zu usable (%.2f %%); error median %.3f deg, 95th %.3f deg, max %.2f deg\n",
              within2, usable, 100.0 * within2 / usable, pct(0.5), pct(0.95), err.empty() ? NAN : err.back());
  std::printf("grains: %d found (scenario: %d)\n", r.grains.count(), s.micro.grain_count);
  int status_count[5] = {0, 0, 0, 0, 0};
  for (uint8_t st : r.status) status_count[st]++;
  for (int k = 0; k < 5; ++k)
    if (status_count[k])
      std::printf("  status %s: %d points\n", point_status_name(static_cast<PointStatus>(k)), status_count[k]);
  if (std::getenv("ORDERBAND_BENCH_DETAIL")) {
    for (size_t k = 0; k < config.grid.count(); ++k) {
      if (!r.orientation[k]) continue;
      const double e = rad_to_deg(cubic.misorientation_angle(*r.orientation[k], *truth.orientations[k]));
      if (e > 2) {
        const Rotation m = cubic.misorientation(*truth.orientations[k], *r.orientation[k]);
        Eigen::Vector3d a = m.axis().cwiseAbs();
        std::sort(a.data(), a.data() + 3, std::greater<double>());
        std::printf("  point %zu: error %.1f deg about <%.2f %.2f %.2f>, bands %d, residual %.2f, r %.3f\n", k, e, a[0],
                    a[1], a[2], r.bands_matched[k], r.fit_residual_deg[k], r.correlation[k]);
      }
    }
  }
}

}  // namespace

int main(int argc, char** argv) {
  const int px = argc > 1 ? std::atoi(argv[1]) : 60;
  const int side = argc > 2 ? std::atoi(argv[2]) : 40;
  const double counts = argc > 3 ? std::atof(argv[3]) : 5000;
  const std::string dir = (std::filesystem::temp_directory_path() / "orderband-orient-bench").string();
  std::filesystem::create_directories(dir);
  std::ofstream(dir + "/s.toml") << "[scenario]\nseed = 3\n[scan]\nrows = " << side << "\ncols = " << side
                                 << "\nstep_um = 0.03\n[detector]\nwidth_px = " << px << "\nheight_px = " << px
                                 << "\npc_px = [" << px / 2.0 << ", " << 0.3 * px << "]\ndistance_px = " << 0.75 * px
                                 << "\n[phases]\npair = \""
                                 << (std::getenv("ORDERBAND_BENCH_PAIR") ? std::getenv("ORDERBAND_BENCH_PAIR") : "ni")
                                 << "\"\n[patterns]\ncounts_per_px = " << counts
                                 << "\n[grains]\ncount = 4\n[secondary]\narea_fraction = 0.3\ndistribution = "
                                    "\"lognormal\"\nmedian_diameter_um = 0.12\nsigma_ln = 0.2\n";
  const SynthScenario s = read_synth_scenario(dir + "/s.toml");
  write_synthetic_scan(s, dir + "/scan", "orient_bench");
  const ScanConfig config = read_scan_config(dir + "/scan/scan.toml");
  const ScanInputs inputs = read_scan_inputs(config, InputHashing::skip);
  std::ifstream truth_in(dir + "/scan/truth_orientations.csv");
  const OrientationTable truth = read_orientation_csv(truth_in, config.grid, "truth");
  double indexed_rate = 0;
  // Every point indexed (the reference), then orientations from the row above first.
  for (const bool from_neighbours : {false, true}) {
    OrientSpec spec;
    spec.from_neighbours = from_neighbours;
    const auto t0 = std::chrono::steady_clock::now();
    const OrientationResults r = orient_scan(inputs, spec);
    const double sec = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    const double rate = config.grid.count() / sec;
    if (!from_neighbours) indexed_rate = rate;
    std::printf("\n%s: %.0f points/s (%.2f x every point indexed), %zu points refined from the row above\n",
                from_neighbours ? "orientations from the row above first" : "every point indexed", rate,
                rate / indexed_rate, r.points_from_neighbours);
    report(r, config, truth, s, side, px, counts, sec);
  }
  if (!std::getenv("ORDERBAND_BENCH_KEEP")) std::filesystem::remove_all(dir);
  return 0;
}
