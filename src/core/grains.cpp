// Grain segmentation.
#include "orderband/grains.hpp"

#include <cmath>
#include <deque>
#include <map>

#include "orderband/units.hpp"

namespace orderband {

GrainMap segment_grains(const ScanGrid& grid, const std::vector<std::optional<Rotation>>& ori,
                        const CrystalSymmetry& sym, const GrainSpec& spec) {
  const size_t n = grid.count();
  const double threshold = deg_to_rad(spec.threshold_deg);
  std::vector<int32_t> label(n, 0);
  int next = 0;
  for (size_t start = 0; start < n; ++start) {
    if (label[start] || !ori[start]) continue;
    label[start] = ++next;
    std::deque<size_t> queue{start};
    while (!queue.empty()) {
      const size_t k = queue.front();
      queue.pop_front();
      for (const GridPoint& nb : grid.neighbours(grid.point(k), 8)) {
        const size_t j = grid.index(nb);
        if (label[j] || !ori[j]) continue;
        if (sym.misorientation_angle(*ori[k], *ori[j]) < threshold) {
          label[j] = next;
          queue.push_back(j);
        }
      }
    }
  }
  // Means and sizes.
  auto summarise = [&](std::vector<int32_t>& lab, int count) {
    std::vector<std::vector<Rotation>> members(count);
    for (size_t k = 0; k < n; ++k)
      if (lab[k]) members[lab[k] - 1].push_back(*ori[k]);
    GrainMap g;
    g.id = lab;
    for (auto& m : members) {
      g.size.push_back(static_cast<int>(m.size()));
      g.mean.push_back(m.empty() ? Rotation() : sym.mean(m));
    }
    return g;
  };
  GrainMap g = summarise(label, next);
  // Merge small grains into the touching grain with the closest mean orientation.
  std::vector<int> target(next + 1);
  for (int id = 1; id <= next; ++id) target[id] = id;
  for (int id = 1; id <= next; ++id) {
    if (g.size[id - 1] >= spec.min_points) continue;
    double best = INFINITY;
    for (size_t k = 0; k < n; ++k) {
      if (label[k] != id) continue;
      for (const GridPoint& nb : grid.neighbours(grid.point(k), 8)) {
        const int other = label[grid.index(nb)];
        if (!other || other == id || g.size[other - 1] < spec.min_points) continue;
        const double a = sym.misorientation_angle(g.mean[id - 1], g.mean[other - 1]);
        if (a < best) best = a, target[id] = other;
      }
    }
  }
  std::map<int, int> renumber;
  for (size_t k = 0; k < n; ++k) {
    if (!label[k]) continue;
    const int t = target[label[k]];
    if (!renumber.count(t)) renumber.emplace(t, static_cast<int>(renumber.size()) + 1);
  }
  for (size_t k = 0; k < n; ++k)
    if (label[k]) label[k] = renumber[target[label[k]]];
  return summarise(label, static_cast<int>(renumber.size()));
}

std::vector<float> kernel_average_misorientation(const ScanGrid& grid, const std::vector<std::optional<Rotation>>& ori,
                                                 const GrainMap& grains, const CrystalSymmetry& sym) {
  std::vector<float> kam(grid.count(), std::nanf(""));
#pragma omp parallel for schedule(static)
  for (long k = 0; k < static_cast<long>(grid.count()); ++k) {
    if (!grains.id[k]) continue;
    double sum = 0;
    int count = 0;
    for (const GridPoint& nb : grid.neighbours(grid.point(k), 8)) {
      const size_t j = grid.index(nb);
      if (grains.id[j] != grains.id[k]) continue;
      sum += rad_to_deg(sym.misorientation_angle(*ori[k], *ori[j]));
      ++count;
    }
    if (count) kam[k] = static_cast<float>(sum / count);
  }
  return kam;
}

std::vector<std::optional<Rotation>> kernel_mean_orientations(const ScanGrid& grid,
                                                              const std::vector<std::optional<Rotation>>& ori,
                                                              const GrainMap& grains, const CrystalSymmetry& sym,
                                                              int radius) {
  std::vector<std::optional<Rotation>> out = ori;
  if (radius <= 0) return out;
#pragma omp parallel for schedule(static)
  for (long k = 0; k < static_cast<long>(grid.count()); ++k) {
    const int id = grains.id[k];
    if (!id || !ori[k]) continue;
    const GridPoint p = grid.point(k);
    const Eigen::Vector4d own = ori[k]->hamilton().coeffs();
    Eigen::Vector4d sum = Eigen::Vector4d::Zero();
    for (int row = std::max(0, p.row - radius); row <= std::min(grid.rows - 1, p.row + radius); ++row)
      for (int col = std::max(0, p.col - radius); col <= std::min(grid.cols - 1, p.col + radius); ++col) {
        const size_t j = grid.index({row, col});
        if (grains.id[j] != id || !ori[j]) continue;
        Eigen::Vector4d c = sym.nearest_equivalent(*ori[j], *ori[k]).hamilton().coeffs();
        if (c.dot(own) < 0) c = -c;
        sum += c;
      }
    out[k] = Rotation::from_quaternion(sum[3], sum[0], sum[1], sum[2]);  // Eigen order (x, y, z, w)
  }
  return out;
}

}  // namespace orderband
