// Dynamical spheres: the fundamental-sector solution beside solving every pixel (the plain
// reference) at the same nside in one run, the agreement of the two, the time of a full-size
// sphere, and the time to load one from the cache.
//
// Usage: sphere_bench [reference_nside=32] [full_nside=128] [cif=crystal-data/ni3al-gamma-prime.cif]
#include <omp.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <string>

#include "orderband/dynamical_sphere.hpp"
#include "orderband/phase_cif.hpp"
#include "orderband/sphere_file.hpp"

using namespace orderband;

namespace {

double seconds_since(std::chrono::steady_clock::time_point t0) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
}

/// The plain reference: every pixel solved at its own centre, no symmetry used.
std::vector<double> every_pixel(const Phase& phase, const DynamicalSphereSpec& spec) {
  const SphereGrid grid(spec.nside);
  const CrystalPotential potential(phase, spec.kilovolts, potential_index_for(phase, spec.beams), spec.absorption);
  const BlochWaveSolver solver(potential, spec.beams);
  std::vector<double> out(grid.npix());
#pragma omp parallel for schedule(dynamic, 16)
  for (long p = 0; p < grid.npix(); ++p)
    out[p] = backscatter_intensity(solver.solve(-grid.centre_of(p)), phase, spec.depth);
  return out;
}

}  // namespace

int main(int argc, char** argv) {
  const int reference_nside = argc > 1 ? std::atoi(argv[1]) : 32;
  const int full_nside = argc > 2 ? std::atoi(argv[2]) : 128;
  const std::string cif =
      argc > 3 ? argv[3] : std::string(ORDERBAND_SOURCE_DIR) + "/crystal-data/ni3al-gamma-prime.cif";
  const Phase phase = load_phase_cif(cif);
  std::printf("sphere_bench: %s, %d threads\n", phase.name.c_str(), omp_get_max_threads());

  DynamicalSphereSpec spec;
  spec.nside = reference_nside;
  auto t0 = std::chrono::steady_clock::now();
  const std::vector<double> plain = every_pixel(phase, spec);
  const double t_plain = seconds_since(t0);
  t0 = std::chrono::steady_clock::now();
  const DynamicalSphere sector = dynamical_sphere(phase, spec);
  const double t_sector = seconds_since(t0);
  double rms = 0, mean = 0;
  for (long p = 0; p < static_cast<long>(plain.size()); ++p) {
    rms += std::pow(sector.intensity.value(p) - plain[p], 2);
    mean += plain[p];
  }
  rms = std::sqrt(rms / plain.size());
  mean /= plain.size();
  std::printf(
      "nside %d: every pixel %.1f s (%zu solutions), sector %.2f s (%zu solutions, %.1f strong beams): %.1fx;"
      " unfolded vs direct rms %.4f of the mean (interpolation at this nside)\n",
      reference_nside, t_plain, plain.size(), t_sector, sector.directions_solved, sector.mean_strong_beams,
      t_plain / t_sector, rms / mean);

  spec.nside = full_nside;
  const std::string cache = std::filesystem::temp_directory_path() / "orderband-sphere-bench";
  std::filesystem::remove_all(cache);
  t0 = std::chrono::steady_clock::now();
  cached_dynamical_sphere(phase, spec, cache, {"bench", "sphere_bench", cif}, {});
  const double t_full = seconds_since(t0);
  t0 = std::chrono::steady_clock::now();
  bool from_cache = false;
  cached_dynamical_sphere(phase, spec, cache, {"bench", "sphere_bench", cif}, {}, &from_cache);
  const double t_load = seconds_since(t0);
  std::printf("nside %d: computed and cached in %.1f s; loaded from the cache in %.3f s (%s)\n", full_nside, t_full,
              t_load, from_cache ? "cache hit" : "MISSED");
  std::filesystem::remove_all(cache);
  return from_cache ? 0 : 1;
}
