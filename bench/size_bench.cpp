// Precipitate statistics through the whole map chain over many seeds: resolved sections against the
// truth counted the same way, and the 3-D secondary mean with its interval.
// usage: size_bench [SEEDS=20] [SIDE=80] [COUNTS=5000] [SCENARIO=medium]
// Each seed renders a synthetic scan (SIDE × SIDE points, 60 × 60 px, log-normal secondary γ′,
// tertiary 5 %, two grains), maps it with the model-led estimator and prints one row; the last
// lines give the shares the checks ask for. Scenarios (invented, each a different size
// against the step):
//   medium: median 0.15 µm, σ 0.2, 30 %, step 25 nm (≈ 6 steps across the median);
//   fine:   median 0.08 µm, σ 0.25, 25 %, step 15 nm (≈ 5 steps, sections near the limit);
//   coarse: median 0.30 µm, σ 0.15, 35 %, step 50 nm (≈ 6 steps, few sections per field);
//   sparse: median 0.12 µm, σ 0.2, 10 %, step 20 nm (isolated particles, few per field).
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <sstream>
#include <string>

#include "orderband/truth_comparison.hpp"
#include "synthetic_scan.hpp"

using namespace orderband;

struct Population {
  const char* name;
  double median_um, sigma_ln, area_fraction, step_um;
};

const Population kPopulations[] = {{"medium", 0.15, 0.2, 0.30, 0.025},
                                   {"fine", 0.08, 0.25, 0.25, 0.015},
                                   {"coarse", 0.30, 0.15, 0.35, 0.050},
                                   {"sparse", 0.12, 0.2, 0.10, 0.020}};

int main(int argc, char** argv) {
  const int seeds = argc > 1 ? std::atoi(argv[1]) : 20;
  const int side = argc > 2 ? std::atoi(argv[2]) : 80;
  const double counts = argc > 3 ? std::atof(argv[3]) : 5000;
  const std::string name = argc > 4 ? argv[4] : "medium";
  const Population* pop = nullptr;
  for (const Population& p : kPopulations)
    if (name == p.name) pop = &p;
  if (!pop) {
    std::fprintf(stderr, "size_bench: scenario \"%s\" is not medium, fine, coarse or sparse\n", name.c_str());
    return 2;
  }
  const std::string dir = (std::filesystem::temp_directory_path() / ("orderband-size-bench-" + name)).string();
  int mean_within = 0, mean_covered = 0, density_covered = 0, fitted = 0;
  double count_error_sum = 0, ecd_error_sum = 0;
  std::printf("%5s %8s %8s %9s %9s %9s %19s %9s %8s %17s %8s\n", "seed", "limit", "count", "truth", "ECD", "truth",
              "3-D mean (95 % CI)", "truth", "N_V", "(95 % CI)", "truth");
  const auto t0 = std::chrono::steady_clock::now();
  for (int seed = 1; seed <= seeds; ++seed) {
    std::ostringstream toml;
    toml << "[scenario]\nseed = " << 500 + seed << "\n[scan]\nrows = " << side << "\ncols = " << side
         << "\nstep_um = " << pop->step_um
         << "\n[detector]\nwidth_px = 60\nheight_px = 60\n"
            "pc_px = [30.0, 18.0]\ndistance_px = 45.0\n[patterns]\ncounts_per_px = "
         << counts << "\n[grains]\ncount = 2\n[secondary]\narea_fraction = " << pop->area_fraction
         << "\ndistribution = \"lognormal\"\nmedian_diameter_um = " << pop->median_um
         << "\nsigma_ln = " << pop->sigma_ln << "\n[tertiary]\nfraction = 0.05\n";
    const ScanConfig config = bench::render_scenario(dir, toml.str(), "size_bench");
    const MapResults r = bench::map_without_mean_spheres(config);
    const std::vector<TruthClassCount> truth = count_truth_sections(
        read_truth_sections(dir + "/scan/truth_particles.csv"), config.grid, r.detection.diameter_um);
    TruthClassCount t;
    for (const TruthClassCount& c : truth)
      if (c.name == "secondary") t = c;
    const ClassStats* sec = nullptr;
    for (const ClassStats& c : r.classes)
      if (c.name == "secondary") sec = &c;
    // The scenario's population: log-normal, mean = median · exp(σ²/2).
    const double d3 = pop->median_um * std::exp(0.5 * pop->sigma_ln * pop->sigma_ln),
                 area = config.grid.field_width_um() * config.grid.field_height_um();
    const double nv = t.count_all / area / d3;  // N_A = N_V ⟨D⟩ over the true sections
    const SphereSizeFit* fit = r.secondary_preferred();
    if (!sec) {
      std::printf("%5d no secondary class measured\n", seed);
      continue;
    }
    count_error_sum += std::abs(sec->count - t.count_resolved) / std::max(1.0, double(t.count_resolved));
    ecd_error_sum += std::abs(sec->mean_ecd_um / t.mean_ecd_resolved_um - 1);
    if (fit) {
      ++fitted;
      mean_within += std::abs(fit->mean_diameter_um / d3 - 1) < 0.15;
      mean_covered += fit->mean_low_um <= d3 && d3 <= fit->mean_high_um;
      density_covered += fit->density_low_per_um3 <= nv && nv <= fit->density_high_per_um3;
    }
    std::printf("%5d %8.4f %8d %9d %9.4f %9.4f %7.4f (%.3f–%.3f) %9.4f %8.0f %8.0f–%-8.0f %8.0f\n", seed,
                r.detection.diameter_um, sec->count, t.count_resolved, sec->mean_ecd_um, t.mean_ecd_resolved_um,
                fit ? fit->mean_diameter_um : NAN, fit ? fit->mean_low_um : NAN, fit ? fit->mean_high_um : NAN, d3,
                fit ? fit->number_density_per_um3 : NAN, fit ? fit->density_low_per_um3 : NAN,
                fit ? fit->density_high_per_um3 : NAN, nv);
    std::fflush(stdout);
  }
  const double sec = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  std::printf("\n%s: %d seeds, %d x %d points of %.0f nm, %.0f counts/px, %.0f s\n", pop->name, seeds, side, side,
              1000 * pop->step_um, counts, sec);
  std::printf(
      "resolved sections: mean |count error| %.1f %%, mean |ECD error| %.1f %% (against the truth counted the same "
      "way)\n",
      100 * count_error_sum / seeds, 100 * ecd_error_sum / seeds);
  std::printf(
      "3-D mean: fitted in %d, within 15 %% in %d, inside its 95 %% CI in %d; N_V inside its CI in %d (of %d)\n",
      fitted, mean_within, mean_covered, density_covered, seeds);
  std::filesystem::remove_all(dir);
  return 0;
}
