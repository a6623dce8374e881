// Benchmark: kinematic pattern rendering speed (patterns per second), single core and all cores.
// usage: render_bench [PATTERN_PX=60] [PATTERNS=2000]
#include <omp.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <vector>

#include "orderband/pair_catalog.hpp"
#include "orderband/synth.hpp"

using namespace orderband;

int main(int argc, char** argv) {
  const int px = argc > 1 ? std::atoi(argv[1]) : 60;
  const int count = argc > 2 ? std::atoi(argv[2]) : 2000;
  const OrderingPair pair = load_named_pair("ni");
  const BandModelParams params;
  const KinematicBandModel ordered(pair.ordered, 20, params), disordered(pair.disordered, 20, params);
  DetectorGeometrySpec spec;
  spec.width_px = spec.height_px = px;
  spec.pc_px = {px / 2.0, 0.3 * px};
  spec.distance_px = 0.75 * px;
  const DetectorGeometry geo(spec);
  const PatternRenderer renderer(geo, ordered, disordered, 5000, 0.5);
  const auto rotations = random_rotations(count, 1);
  for (int threads : {1, omp_get_max_threads()}) {
    omp_set_num_threads(threads);
    const auto t0 = std::chrono::steady_clock::now();
#pragma omp parallel
    {
      std::vector<std::uint16_t> out(static_cast<size_t>(px) * px);
#pragma omp for schedule(dynamic)
      for (int k = 0; k < count; ++k) {
        // A typical demo point: 70 % γ matrix and 30 % γ′ in the same orientation.
        const std::vector<MixtureComponent> mix{{rotations[k], false, 0.7, 0}, {rotations[k], true, 0.3, 0}};
        renderer.render(mix, geo, k, SampleType::uint16, 1.0, out.data());
      }
    }
    const double s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    std::printf("%d x %d px, %d thread(s): %.0f patterns/s (two-phase mixtures)\n", px, px, threads, count / s);
  }
  return 0;
}
