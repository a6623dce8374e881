// Benchmark: band profiles of 8 plane families per pattern (patterns per second).
// usage: profile_bench [PATTERNS=4000]
// Target (issue Step 4): ≥ 5,000 patterns/s per core at 80 × 80 px.
#include <omp.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <random>

#include "orderband/band_profile.hpp"
#include "orderband/electron.hpp"
#include "orderband/pair_catalog.hpp"

using namespace orderband;

int main(int argc, char** argv) {
  const int count = argc > 1 ? std::atoi(argv[1]) : 4000;
  const OrderingPair pair = load_named_pair("ni");
  std::vector<PlaneFamily> eight;
  for (const PlaneFamily& f : enumerate_plane_families(pair.ordered, 1.0))
    if (eight.size() < 8) eight.push_back(f);
  const auto families = profile_families(eight, electron_wavelength_A(20));
  int planes = 0;
  for (const auto& f : families) planes += static_cast<int>(f.normals.size());
  const BandProfiler profiler(families, ProfileSpec{});
  const auto rotations = random_rotations(count, 4);
  for (int px : {80, 160}) {
    DetectorGeometrySpec s;
    s.width_px = s.height_px = px;
    s.pc_px = {px / 2.0, 0.3 * px};
    s.distance_px = 0.75 * px;
    const DetectorGeometry geo(s);
    const DetectorRays rays(geo);
    std::vector<float> pattern(static_cast<size_t>(px) * px);
    std::mt19937 rng(1);
    std::normal_distribution<float> noise(0, 1);
    for (float& v : pattern) v = noise(rng);
    // The usual circular mask (the inscribed circle) keeps π/4 of the pixels.
    std::vector<uint8_t> circle(pattern.size());
    for (int i = 0; i < px; ++i)
      for (int j = 0; j < px; ++j) circle[i * px + j] = std::hypot(j + 0.5 - px / 2.0, i + 0.5 - px / 2.0) <= px / 2.0;
    for (const bool masked : {false, true})
      for (int threads : {1, omp_get_max_threads()}) {
        omp_set_num_threads(threads);
        const auto t0 = std::chrono::steady_clock::now();
        double checksum = 0;
#pragma omp parallel reduction(+ : checksum)
        {
          std::vector<FamilyProfile> out;
#pragma omp for schedule(static)
          for (int k = 0; k < count; ++k) {
            profiler.profile(pattern.data(), masked ? circle : std::vector<uint8_t>{}, rays, rotations[k], out);
            checksum += out[0].sum[10];
          }
        }
        const double sec = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
        std::printf("%d x %d px%s, 8 families (%d planes), %d thread(s): %.0f patterns/s (checksum %.3g)\n", px, px,
                    masked ? " in a circular mask" : "", planes, threads, count / sec, checksum);
      }
  }
  return 0;
}
