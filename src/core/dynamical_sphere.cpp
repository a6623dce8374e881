// Dynamical spheres: Bloch-wave intensities on the fundamental sector, unfolded by symmetry.
#include "orderband/dynamical_sphere.hpp"

#include <algorithm>
#include <array>

#include "orderband/error.hpp"
#include "orderband/laue_group.hpp"

namespace orderband {

LaueSector::LaueSector(const Phase& phase) : reference_(Eigen::Vector3d(0.1234, 0.3157, 0.9406).normalized()) {
  for (const Eigen::Matrix3d& r : laue_rotations(phase)) {
    ops_.push_back(r);
    ops_.push_back(-r);
  }
}

Eigen::Vector3d LaueSector::canonical(const Eigen::Vector3d& unit) const {
  Eigen::Vector3d best = unit;
  double best_dot = -2;
  for (const Eigen::Matrix3d& op : ops_) {
    const Eigen::Vector3d image = op * unit;
    if (const double d = image.dot(reference_); d > best_dot) best_dot = d, best = image;
  }
  return best;
}

namespace {

/// Per pixel, the four sector pixels its image is interpolated from and their weights.
struct SectorUnfolding {
  std::vector<std::array<long, 4>> pixel;
  std::vector<std::array<double, 4>> weight;
  std::vector<long> needed;  ///< pixels to solve, ascending
};

SectorUnfolding unfolding(const SphereGrid& grid, const LaueSector& sector) {
  SectorUnfolding u;
  const long n = grid.npix();
  u.pixel.resize(n);
  u.weight.resize(n);
  std::vector<uint8_t> needed(n, 0);
  for (long p = 0; p < n; ++p) {
    grid.interpolation(sector.canonical(grid.centre_of(p)), u.pixel[p].data(), u.weight[p].data());
    for (int i = 0; i < 4; ++i)
      if (u.weight[p][i] != 0) needed[u.pixel[p][i]] = 1;
  }
  for (long p = 0; p < n; ++p)
    if (needed[p]) u.needed.push_back(p);
  return u;
}

}  // namespace

DynamicalSphere dynamical_sphere(const Phase& phase, const DynamicalSphereSpec& spec, const ProgressFn& progress) {
  const SphereGrid grid(spec.nside);
  const CrystalPotential potential(phase, spec.kilovolts, potential_index_for(phase, spec.beams), spec.absorption);
  const BlochWaveSolver solver(potential, spec.beams);
  const SectorUnfolding unfold = unfolding(grid, LaueSector(phase));
  const long needed = static_cast<long>(unfold.needed.size());
  std::vector<double> solved(grid.npix(), 0.0);
  std::vector<size_t> beams(needed, 0);
  size_t done = 0;
#pragma omp parallel for schedule(dynamic, 16)
  for (long i = 0; i < needed; ++i) {
    const long p = unfold.needed[i];
    const BlochWaves waves = solver.solve(-grid.centre_of(p));
    solved[p] = backscatter_intensity(waves, phase, spec.depth);
    beams[i] = waves.beams.strong.size();
    if (progress) {
#pragma omp critical(dynamical_sphere_progress)
      progress(++done, static_cast<size_t>(needed));
    }
  }
  DynamicalSphere out{SphereMap(grid), static_cast<size_t>(needed), 0.0};
  for (size_t b : beams) out.mean_strong_beams += static_cast<double>(b) / std::max<long>(needed, 1);
  for (long p = 0; p < grid.npix(); ++p) {
    double v = 0;
    for (int i = 0; i < 4; ++i) v += unfold.weight[p][i] * solved[unfold.pixel[p][i]];
    out.intensity.sum[p] = v;
    out.intensity.weight[p] = 1;
  }
  return out;
}

}  // namespace orderband
