// Coarsening kinetics recovered through the whole map chain: an ageing series with known LSW
// kinetics, mapped trial by trial, the rate constant fitted on the 3-D mean radii as `screen` does.
// usage: kinetics_bench [SEEDS=20] [SIDE=64] [COUNTS=5000]
// Scenario (invented): secondary γ′ with LSW size distributions whose 3-D mean radius follows
// r³ − r0³ = k t with r0 = 0.040 µm and k = 2.0 × 10⁻⁵ µm³/h, aged 2, 8, 32 and 128 h (mean
// diameters 0.094, 0.121, 0.178, 0.276 µm), 30 % area at every time (LSW coarsening keeps the
// volume fraction), scans of SIDE × SIDE points, 60 × 60 px, two grains; the step follows the
// size as a practitioner would set it, about a fifth of the mean diameter (20, 25, 35, 55 nm), so
// that the coarse trials' fields still hold tens of particles. Each seed prints
// the fitted radii and k with its 95 % interval; the last lines give the share of seeds whose
// interval holds the scenario's k, and the mean relative error of k.
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <sstream>
#include <string>
#include <vector>

#include "orderband/kinetics.hpp"
#include "orderband/stereology.hpp"
#include "synthetic_scan.hpp"

using namespace orderband;

namespace {

constexpr double kR0 = 0.040, kRate = 2.0e-5;  // µm, µm³/h (the scenario's)
const std::vector<double> kTimes = {2, 8, 32, 128};

double true_radius(double t) { return std::cbrt(kR0 * kR0 * kR0 + kRate * t); }

/// About a fifth of the mean diameter, in whole 5 nm, at least 20 nm (common practice, no source).
double step_um(double t) { return std::max(0.020, 0.005 * std::round(2 * true_radius(t) / 5 / 0.005)); }

/// The 3-D mean radius of one trial's secondary particles (the fit `screen` prefers; 0 if none)
/// and its standard error from the fit's interval, symmetric in the logarithm, as `screen` takes it.
struct Radius {
  double value = 0, se = 0;
};

Radius measured_radius(const std::string& dir, int seed, double t, int side, double counts) {
  std::ostringstream toml;
  toml << "[scenario]\nseed = " << 9000 + 10 * seed + static_cast<int>(std::log2(t)) << "\n[scan]\nrows = " << side
       << "\ncols = " << side << "\nstep_um = " << step_um(t)
       << "\n[detector]\nwidth_px = 60\nheight_px = 60\n"
          "pc_px = [30.0, 18.0]\ndistance_px = 45.0\n[patterns]\ncounts_per_px = "
       << counts
       << "\n[grains]\ncount = 2\n[secondary]\narea_fraction = 0.3\n"
          "distribution = \"lsw\"\nmean_diameter_um = "
       << 2 * true_radius(t) << "\n";
  const MapResults r = bench::map_without_mean_spheres(bench::render_scenario(dir, toml.str(), "kinetics_bench"));
  const SphereSizeFit* fit = r.secondary_preferred();
  if (!fit) return {};
  const double radius = 0.5 * fit->mean_diameter_um;
  return {radius, 0.5 * standard_error_from_log_interval(fit->mean_diameter_um, fit->mean_low_um, fit->mean_high_um)};
}

/// Whether k's interval holds the scenario's k, and its width relative to k.
struct Interval {
  bool holds = false;
  double width = 0;
};
Interval judged(const CoarseningFit& f) {
  return {f.k_low <= kRate && kRate <= f.k_high, (f.k_high - f.k_low) / kRate};
}

}  // namespace

int main(int argc, char** argv) {
  const int seeds = argc > 1 ? std::atoi(argv[1]) : 20;
  const int side = argc > 2 ? std::atoi(argv[2]) : 64;
  const double counts = argc > 3 ? std::atof(argv[3]) : 5000;
  const std::string dir = (std::filesystem::temp_directory_path() / "orderband-kinetics-bench").string();
  std::printf("%5s", "seed");
  for (double t : kTimes) std::printf("  r(%3.0f h, %2.0f nm) / true", t, 1000 * step_um(t));
  std::printf("  %10s %23s %s  %23s %s  %s\n", "k µm³/h", "95 % CI (radii's CIs)", "covers", "95 % CI (scatter)",
              "covers", "first three: radii's / scatter");
  // Coverage and mean relative width: [0] the radii's own intervals carried through (as `screen`
  // does), [1] the scatter about the line alone; over all four trials, and over the first three.
  int covered[2] = {0, 0}, covered3[2] = {0, 0}, fitted = 0, fitted3 = 0;
  double width[2] = {0, 0}, width3[2] = {0, 0};
  double error_sum = 0;
  const auto t0 = std::chrono::steady_clock::now();
  for (int seed = 1; seed <= seeds; ++seed) {
    std::vector<double> t, r, se;
    std::printf("%5d", seed);
    for (double time : kTimes) {
      const Radius radius = measured_radius(dir, seed, time, side, counts);
      std::printf("  %14.4f / %6.4f", radius.value, true_radius(time));
      if (radius.value > 0) t.push_back(time), r.push_back(radius.value), se.push_back(radius.se);
    }
    if (t.size() < 3) {
      std::printf("  fewer than three trials with a 3-D size\n");
      continue;
    }
    const CoarseningFit f = fit_coarsening(t, r, 3.0, se), g = fit_coarsening(t, r, 3.0);
    const Interval a = judged(f), b = judged(g);
    ++fitted;
    covered[0] += a.holds, covered[1] += b.holds, width[0] += a.width, width[1] += b.width;
    error_sum += std::abs(f.k / kRate - 1);
    std::printf("  %10.3e %11.3e–%-11.3e %-6s %11.3e–%-11.3e %-6s", f.k, f.k_low, f.k_high, a.holds ? "yes" : "no",
                g.k_low, g.k_high, b.holds ? "yes" : "no");
    if (t.size() == kTimes.size()) {
      const std::vector<double> t3(t.begin(), t.begin() + 3), r3(r.begin(), r.begin() + 3),
          se3(se.begin(), se.begin() + 3);
      const Interval a3 = judged(fit_coarsening(t3, r3, 3.0, se3)), b3 = judged(fit_coarsening(t3, r3, 3.0));
      ++fitted3;
      covered3[0] += a3.holds, covered3[1] += b3.holds, width3[0] += a3.width, width3[1] += b3.width;
      std::printf("  %s / %s", a3.holds ? "yes" : "no", b3.holds ? "yes" : "no");
    }
    std::printf("\n");
    std::fflush(stdout);
  }
  std::filesystem::remove_all(dir);
  const double sec = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  std::printf("\n%d seeds, %zu trials each, %d x %d points, %.0f counts/px, %.0f s\n", seeds, kTimes.size(), side, side,
              counts, sec);
  std::printf(
      "k = %.1e µm³/h inside its 95 %% interval (mean width / k) in %d of %d fitted series with the radii's "
      "intervals carried (%.2f), %d with the scatter alone (%.2f); mean |k error| %.1f %%\n",
      kRate, covered[0], fitted, width[0] / std::max(fitted, 1), covered[1], width[1] / std::max(fitted, 1),
      fitted ? 100 * error_sum / fitted : NAN);
  std::printf(
      "first three trials (2, 8, 32 h): %d of %d with the radii's intervals (%.2f), %d with the scatter "
      "alone (%.2f)\n",
      covered3[0], fitted3, width3[0] / std::max(fitted3, 1), covered3[1], width3[1] / std::max(fitted3, 1));
  return 0;
}
