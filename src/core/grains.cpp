// Grain segmentation.
#include "orderband/grains.hpp"

#include <algorithm>
#include <cmath>
#include <map>

#include "orderband/grid_regions.hpp"
#include "orderband/units.hpp"

namespace orderband {

namespace {

/// Orientations of a grain's points as rotation vectors (radians) relative to a reference.
std::vector<Eigen::Vector3d> tangent_vectors(const std::vector<size_t>& members,
                                             const std::vector<std::optional<Rotation>>& ori, const Rotation& reference,
                                             const CrystalSymmetry& sym) {
  std::vector<Eigen::Vector3d> v;
  v.reserve(members.size());
  const Rotation back = reference.inverse();
  for (size_t k : members) {
    const Rotation d = sym.nearest_equivalent(*ori[k], reference) * back;
    v.push_back(d.axis() * d.angle());
  }
  return v;
}

/// Two-means clustering of tangent vectors, started from the point farthest from the centroid and
/// the point farthest from that one. Returns the cluster of each vector (0 or 1) and both centres.
struct TwoMeans {
  std::vector<int> cluster;
  Eigen::Vector3d centre[2];
};

TwoMeans two_means(const std::vector<Eigen::Vector3d>& v) {
  auto farthest_from = [&](const Eigen::Vector3d& c) {
    size_t best = 0;
    for (size_t i = 1; i < v.size(); ++i)
      if ((v[i] - c).squaredNorm() > (v[best] - c).squaredNorm()) best = i;
    return v[best];
  };
  Eigen::Vector3d centroid = Eigen::Vector3d::Zero();
  for (const auto& x : v) centroid += x;
  centroid /= static_cast<double>(v.size());
  TwoMeans t;
  t.centre[0] = farthest_from(centroid);
  t.centre[1] = farthest_from(t.centre[0]);
  t.cluster.assign(v.size(), 0);
  for (int iteration = 0; iteration < 30; ++iteration) {
    Eigen::Vector3d sum[2] = {Eigen::Vector3d::Zero(), Eigen::Vector3d::Zero()};
    int count[2] = {0, 0};
    bool changed = false;
    for (size_t i = 0; i < v.size(); ++i) {
      const int c = (v[i] - t.centre[1]).squaredNorm() < (v[i] - t.centre[0]).squaredNorm() ? 1 : 0;
      changed |= c != t.cluster[i];
      t.cluster[i] = c;
      sum[c] += v[i];
      ++count[c];
    }
    for (int c = 0; c < 2; ++c)
      if (count[c]) t.centre[c] = sum[c] / count[c];
    if (!changed && iteration > 0) break;
  }
  return t;
}

/// Whether a grain's orientations form two separate groups: two-means centres further apart than
/// the grain threshold, each group with at least `min_points` points clear of the middle third
/// between the centres, and at most a tenth of all points in that middle third. A grain with a
/// smooth orientation gradient fills the middle third (a third of its points for a uniform
/// gradient) and stays whole; two grains chained through a few boundary points with in-between
/// orientations (beam-mixed patterns) are split.
bool is_bimodal(const std::vector<Eigen::Vector3d>& v, const TwoMeans& t, double threshold, int min_points) {
  const Eigen::Vector3d axis = t.centre[1] - t.centre[0];
  const double separation = axis.norm();
  if (separation < threshold) return false;
  int low = 0, middle = 0, high = 0;
  for (const auto& x : v) {
    const double s = (x - t.centre[0]).dot(axis) / (separation * separation);
    if (s < 1.0 / 3)
      ++low;
    else if (s > 2.0 / 3)
      ++high;
    else
      ++middle;
  }
  return low >= min_points && high >= min_points && middle * 10 <= static_cast<int>(v.size());
}

/// Splits every grain whose orientations are bimodal (see is_bimodal) into its two groups,
/// each point to the nearer group centre, repeatedly until no grain splits. The smoothed
/// orientations (kernel mean over the grain, radius 1) decide, so that single misindexed points
/// neither start nor block a split. Returns the number of grains after splitting.
int split_bimodal_grains(const ScanGrid& grid, const std::vector<std::optional<Rotation>>& ori,
                         const CrystalSymmetry& sym, const GrainSpec& spec, std::vector<int32_t>& label, int count) {
  const double threshold = deg_to_rad(spec.threshold_deg);
  const int min_points = std::max(spec.min_points, 1);
  for (int round = 0; round < 8; ++round) {
    GrainMap current;
    current.id = label;
    current.mean.assign(count, Rotation());
    const auto smooth = kernel_mean_orientations(grid, ori, current, sym, 1);
    std::vector<std::vector<size_t>> members(count);
    for (size_t k = 0; k < label.size(); ++k)
      if (label[k]) members[label[k] - 1].push_back(k);
    bool any = false;
    for (int id = 1; id <= static_cast<int>(members.size()); ++id) {
      const auto& m = members[id - 1];
      if (static_cast<int>(m.size()) < 2 * min_points) continue;
      const Rotation reference = *smooth[m.front()];
      const auto v = tangent_vectors(m, smooth, reference, sym);
      const TwoMeans t = two_means(v);
      if (!is_bimodal(v, t, threshold, min_points)) continue;
      ++count;
      for (size_t i = 0; i < m.size(); ++i)
        if (t.cluster[i]) label[m[i]] = count;
      any = true;
    }
    if (!any) break;
  }
  return count;
}

/// Relabels so that every grain is one connected region (a split can leave a group in pieces).
int connected_relabel(const ScanGrid& grid, std::vector<int32_t>& label) {
  const std::vector<int32_t> groups = label;
  return label_regions(
      grid, 8, [&](size_t k) { return groups[k] != 0; }, [&](size_t k, size_t j) { return groups[j] == groups[k]; },
      label);
}

}  // namespace

GrainMap segment_grains(const ScanGrid& grid, const std::vector<std::optional<Rotation>>& ori,
                        const CrystalSymmetry& sym, const GrainSpec& spec) {
  const size_t n = grid.count();
  const double threshold = deg_to_rad(spec.threshold_deg);
  std::vector<int32_t> label;
  int next = label_regions(
      grid, 8, [&](size_t k) { return ori[k].has_value(); },
      [&](size_t k, size_t j) { return sym.misorientation_angle(*ori[k], *ori[j]) < threshold; }, label);
  if (spec.split_bimodal) {
    split_bimodal_grains(grid, ori, sym, spec, label, next);
    next = connected_relabel(grid, label);
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
