// Dynamical intensities against the size of the beam set: the backscattered intensity of random
// directions computed with the strong and weak limits doubled step by step (weak = 5 × strong, as
// the defaults), each set divided by its mean, and the rms change from one limit to the next. A
// beam set is converged where doubling it changes the intensities by less than the accuracy wanted
// (issue F asks < 1 %).
//
// Usage: beam_convergence_bench [directions=150] [largest strong limit=512] [cif=crystal-data/ni-fcc.cif]
//        [kV=20] [max |g| in 1/Å=1.6] [smallest strong limit=8]
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <random>
#include <string>
#include <vector>

#include "orderband/dynamical_sphere.hpp"
#include "orderband/phase_cif.hpp"

using namespace orderband;

namespace {

/// Unit vectors spread uniformly over the sphere (normal deviates normalised), from a fixed seed.
std::vector<Eigen::Vector3d> random_directions(int count) {
  std::mt19937_64 rng(20261204);
  std::normal_distribution<double> normal;
  std::vector<Eigen::Vector3d> out;
  while (static_cast<int>(out.size()) < count) {
    const Eigen::Vector3d v(normal(rng), normal(rng), normal(rng));
    if (v.norm() > 1e-6) out.push_back(v.normalized());
  }
  return out;
}

struct Solved {
  std::vector<double> intensity;  ///< divided by its mean
  double strong_beams = 0;        ///< mean per direction
  double ms_per_direction = 0;    ///< wall time on every thread, per direction
};

Solved solve_all(const Phase& phase, double kv, const BeamSetSpec& beams, const std::vector<Eigen::Vector3d>& dirs) {
  const DynamicalSphereSpec defaults;
  const auto t0 = std::chrono::steady_clock::now();
  const CrystalPotential potential(phase, kv, potential_index_for(phase, beams), defaults.absorption);
  const BlochWaveSolver solver(potential, beams);
  Solved s;
  s.intensity.assign(dirs.size(), 0.0);
  std::vector<double> strong(dirs.size(), 0.0);
#pragma omp parallel for schedule(dynamic)
  for (size_t i = 0; i < dirs.size(); ++i) {
    const BlochWaves waves = solver.solve(-dirs[i]);
    strong[i] = static_cast<double>(waves.beams.strong.size());
    s.intensity[i] = backscatter_intensity(waves, phase, defaults.depth);
  }
  double mean = 0;
  for (double v : s.intensity) mean += v / dirs.size();
  for (double& v : s.intensity) v /= mean;
  for (double b : strong) s.strong_beams += b / dirs.size();
  s.ms_per_direction = 1e3 * std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count() / dirs.size();
  return s;
}

double rms_change(const std::vector<double>& a, const std::vector<double>& b) {
  double sum = 0;
  for (size_t i = 0; i < a.size(); ++i) sum += (a[i] - b[i]) * (a[i] - b[i]);
  return std::sqrt(sum / a.size());
}

}  // namespace

int main(int argc, char** argv) {
  const int directions = argc > 1 ? std::atoi(argv[1]) : 150;
  const double largest = argc > 2 ? std::atof(argv[2]) : 512;
  const std::string cif = argc > 3 ? argv[3] : std::string(ORDERBAND_SOURCE_DIR) + "/crystal-data/ni-fcc.cif";
  const double kv = argc > 4 ? std::atof(argv[4]) : 20.0;
  const double max_g = argc > 5 ? std::atof(argv[5]) : 1.6;
  const double smallest = argc > 6 ? std::atof(argv[6]) : 8;
  const Phase phase = load_phase_cif(cif);
  const std::vector<Eigen::Vector3d> dirs = random_directions(directions);
  std::printf("%s at %.0f kV, %d random directions, |g| <= %.2f 1/A, weak limit = 5 x strong limit\n", cif.c_str(), kv,
              directions, max_g);
  std::printf("%8s %8s %14s %16s %22s\n", "strong", "weak", "strong beams", "ms / direction", "rms change from last");
  Solved last;
  for (double strong = smallest; strong <= largest; strong *= 2) {
    const Solved now = solve_all(phase, kv, {max_g, strong, 5 * strong}, dirs);
    if (last.intensity.empty())
      std::printf("%8.0f %8.0f %14.1f %16.1f %22s\n", strong, 5 * strong, now.strong_beams, now.ms_per_direction, "-");
    else
      std::printf("%8.0f %8.0f %14.1f %16.1f %21.2f%%\n", strong, 5 * strong, now.strong_beams, now.ms_per_direction,
                  100 * rms_change(now.intensity, last.intensity));
    std::fflush(stdout);
    last = now;
  }
  return 0;
}
