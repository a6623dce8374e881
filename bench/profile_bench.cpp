// Benchmark: band profiles of 8 plane families per pattern (patterns per second), three ways in one
// run on the same patterns: a plain loop over every pixel and every plane normal (the reference),
// the cube-map profiler (any orientation) and the fixed-orientation profiler (the points of one
// grain). The two fast ones are checked against the plain loop (largest relative difference of a
// bin's sums) and reported as ratios to it, so the figures hold on a busy machine too.
// usage: profile_bench [PATTERNS=2000] [ORIENTATIONS=20]
#include <omp.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <random>

#include "orderband/band_profile.hpp"
#include "orderband/electron.hpp"
#include "orderband/pair_catalog.hpp"

using namespace orderband;

namespace {

/// The plain reference: every pixel against every plane (unit normals, each family's reach
/// sin(u_max θ_B) worked out once), the bin from the exact arcsine.
void plain_profile(const std::vector<ProfileFamily>& families, const ProfileSpec& spec, const float* pattern,
                   const std::vector<uint8_t>& mask, const DetectorRays& rays, const Rotation& g,
                   std::vector<FamilyProfile>& out) {
  const int bins = static_cast<int>(std::lround(2 * spec.u_max / spec.bin_u));
  thread_local std::vector<std::vector<Eigen::Vector3d>> unit;
  thread_local std::vector<double> reach;
  if (unit.size() != families.size()) {
    unit.assign(families.size(), {});
    reach.assign(families.size(), 0);
    for (size_t f = 0; f < families.size(); ++f) {
      for (const Eigen::Vector3d& n : families[f].normals) unit[f].push_back(n.normalized());
      reach[f] = std::sin(spec.u_max * families[f].theta_b);
    }
  }
  out.assign(families.size(), FamilyProfile{});
  for (FamilyProfile& p : out)
    p.sum.assign(bins, 0), p.sum_sq.assign(bins, 0), p.weight.assign(bins, 0), p.weight_sq.assign(bins, 0),
        p.count.assign(bins, 0);
  const Eigen::Matrix3d m = g.matrix();
  for (size_t q = 0; q < rays.direction.size(); ++q) {
    if (!mask.empty() && !mask[q]) continue;
    const Eigen::Vector3d c = m * rays.direction[q];
    const double v = pattern[q], w = rays.solid_angle[q];
    for (size_t f = 0; f < families.size(); ++f)
      for (const Eigen::Vector3d& n : unit[f]) {
        const double x = n.dot(c);
        if (std::abs(x) > reach[f]) continue;
        const double u = std::asin(x) / families[f].theta_b;
        const double bf = (u + spec.u_max) / spec.bin_u;
        if (!(bf >= 0 && bf < bins)) continue;
        const int b = static_cast<int>(bf);
        out[f].sum[b] += w * v, out[f].sum_sq[b] += w * v * v, out[f].weight[b] += w, out[f].weight_sq[b] += w * w,
            out[f].count[b] += 1;
      }
  }
}

/// The largest difference of a bin's weighted mean between two profiles, over the typical |mean|
/// (bins that hold a pixel in one and not the other, at the arcsine's rounding, are left out).
double largest_difference(const std::vector<FamilyProfile>& a, const std::vector<FamilyProfile>& b, int& moved) {
  double worst = 0, typical = 0;
  int n = 0;
  for (size_t f = 0; f < a.size(); ++f)
    for (size_t k = 0; k < a[f].sum.size(); ++k) {
      if (a[f].count[k] != b[f].count[k]) {
        ++moved;
        continue;
      }
      if (a[f].weight[k] <= 0) continue;
      worst = std::max(worst, std::abs(a[f].mean(k) - b[f].mean(k)));
      typical += std::abs(a[f].mean(k)), ++n;
    }
  return n ? worst / (typical / n) : 0.0;
}

double seconds_since(std::chrono::steady_clock::time_point t0) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
}

}  // namespace

int main(int argc, char** argv) {
  const int count = argc > 1 ? std::atoi(argv[1]) : 2000;
  const int orientations = argc > 2 ? std::max(1, std::atoi(argv[2])) : 20;
  const OrderingPair pair = load_named_pair("ni");
  std::vector<PlaneFamily> eight;
  for (const PlaneFamily& f : enumerate_plane_families(pair.ordered, 1.0))
    if (eight.size() < 8) eight.push_back(f);
  const auto families = profile_families(eight, electron_wavelength_A(20));
  int planes = 0;
  for (const auto& f : families) planes += static_cast<int>(f.normals.size());
  const ProfileSpec spec;
  const BandProfiler profiler(families, spec);
  const auto rotations = random_rotations(orientations, 4);
  std::printf("%d patterns, %d orientations (grains), 8 families (%d planes), %d thread(s) available\n", count,
              orientations, planes, omp_get_max_threads());
  for (int px : {80, 160}) {
    DetectorGeometrySpec s;
    s.width_px = s.height_px = px;
    s.pc_px = {px / 2.0, 0.3 * px};
    s.distance_px = 0.75 * px;
    const DetectorGeometry geo(s);
    const DetectorRays rays(geo);
    // Noise patterns, one per point: the kernels' cost does not depend on the values.
    std::vector<float> patterns(static_cast<size_t>(count) * px * px);
    std::mt19937 rng(1);
    std::normal_distribution<float> noise(1, 0.3);
    for (float& v : patterns) v = noise(rng);
    std::vector<uint8_t> circle(static_cast<size_t>(px) * px);
    for (int i = 0; i < px; ++i)
      for (int j = 0; j < px; ++j) circle[i * px + j] = std::hypot(j + 0.5 - px / 2.0, i + 0.5 - px / 2.0) <= px / 2.0;
    // Points of one grain are consecutive: point k has orientation k·orientations/count.
    auto grain_of = [&](int k) { return static_cast<int>(static_cast<long>(k) * orientations / count); };
    const size_t pixels = static_cast<size_t>(px) * px;
    for (int threads : {1, omp_get_max_threads()}) {
      omp_set_num_threads(threads);
      // Plain loop, on a tenth of the patterns (it is slow).
      const int plain_count = std::max(1, count / 10);
      auto t0 = std::chrono::steady_clock::now();
#pragma omp parallel
      {
        std::vector<FamilyProfile> out;
#pragma omp for schedule(static)
        for (int k = 0; k < plain_count; ++k)
          plain_profile(families, spec, patterns.data() + k * pixels, circle, rays, rotations[grain_of(k)], out);
      }
      const double plain_rate = plain_count / seconds_since(t0);
      // Cube map at each point's orientation.
      t0 = std::chrono::steady_clock::now();
#pragma omp parallel
      {
        std::vector<FamilyProfile> out;
#pragma omp for schedule(static)
        for (int k = 0; k < count; ++k)
          profiler.profile(patterns.data() + k * pixels, circle, rays, rotations[grain_of(k)], out);
      }
      const double cube_rate = count / seconds_since(t0);
      // Fixed orientation: one plan per grain (built inside the timing), then every point of it.
      t0 = std::chrono::steady_clock::now();
      size_t plan_bytes = 0;
#pragma omp parallel reduction(max : plan_bytes)
      {
        std::vector<FamilyProfile> out;
#pragma omp for schedule(static)
        for (int g = 0; g < orientations; ++g) {
          const FixedOrientationProfiler plan = profiler.at_orientation(circle, rays, rotations[g]);
          plan_bytes = std::max(plan_bytes, plan.bytes());
          for (int k = 0; k < count; ++k)
            if (grain_of(k) == g) plan.profile(patterns.data() + k * pixels, out);
        }
      }
      const double fixed_rate = count / seconds_since(t0);
      std::printf(
          "%3d x %3d px, circular mask, %d thread(s): plain %.0f, cube map %.0f (%.1f x), fixed orientation "
          "%.0f (%.1f x) patterns/s; one plan %.0f kB\n",
          px, px, threads, plain_rate, cube_rate, cube_rate / plain_rate, fixed_rate, fixed_rate / plain_rate,
          plan_bytes / 1024.0);
    }
    // Agreement with the plain loop on a few points of each grain.
    double cube_diff = 0, fixed_diff = 0;
    int moved = 0, compared = 0;
    std::vector<FamilyProfile> ref, cube, fixed;
    for (int g = 0; g < orientations; ++g) {
      const FixedOrientationProfiler plan = profiler.at_orientation(circle, rays, rotations[g]);
      for (int k = 0; k < count; ++k) {
        if (grain_of(k) != g || k % 25) continue;
        const float* pattern = patterns.data() + k * pixels;
        plain_profile(families, spec, pattern, circle, rays, rotations[g], ref);
        profiler.profile(pattern, circle, rays, rotations[g], cube);
        plan.profile(pattern, fixed);
        cube_diff = std::max(cube_diff, largest_difference(ref, cube, moved));
        int same = 0;
        fixed_diff = std::max(fixed_diff, largest_difference(cube, fixed, same));
        moved += same * 1000000;
        ++compared;
      }
    }
    std::printf(
        "%3d x %3d px: %d patterns compared; cube map vs plain loop: largest relative difference %.2g, "
        "%d bins with a pixel moved by rounding; fixed orientation vs cube map: %.2g%s\n",
        px, px, compared, cube_diff, moved % 1000000, fixed_diff,
        moved >= 1000000 ? " (bins differ: ERROR)" : " (the same pixels in every bin)");
    if (fixed_diff > 1e-12 || moved >= 1000000) return 1;
  }
  return 0;
}
