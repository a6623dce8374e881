// Two grains' patterns compared over the crystal directions both show.
#include "orderband/common_view.hpp"

#include <algorithm>
#include <array>
#include <cmath>

namespace orderband {

namespace {

/// The Laue group's operations on directions, with the inversion.
std::vector<Eigen::Matrix3d> laue_operations(const CrystalSymmetry& symmetry) {
  std::vector<Eigen::Matrix3d> ops;
  for (const Rotation& s : symmetry.operators())
    for (double sign : {1.0, -1.0}) ops.push_back(sign * s.matrix());
  return ops;
}

/// The coverage cell of a crystal direction's representative: of its equivalents, the one nearest a
/// fixed generic direction (one per orbit).
long representative_cell(const Eigen::Vector3d& crystal, const std::vector<Eigen::Matrix3d>& ops,
                         const SphereGrid& cells) {
  static const Eigen::Vector3d key = Eigen::Vector3d(0.83, 0.47, 0.31).normalized();
  Eigen::Vector3d best = crystal;
  double top = -2;
  for (const Eigen::Matrix3d& op : ops) {
    const Eigen::Vector3d y = op * crystal;
    if (const double d = y.dot(key); d > top) top = d, best = y;
  }
  return cells.pixel_of(best);
}

/// Per detector pixel: its representative's cell (−1 outside the mask).
std::vector<long> pixel_cells(const DetectorRays& rays, const std::vector<uint8_t>& mask, const Rotation& g,
                              const std::vector<Eigen::Matrix3d>& ops, const SphereGrid& cells) {
  const Eigen::Matrix3d to_crystal = g.matrix();
  std::vector<long> cell(rays.direction.size(), -1);
  for (size_t q = 0; q < cell.size(); ++q)
    if (mask.empty() || mask[q]) cell[q] = representative_cell(to_crystal * rays.direction[q], ops, cells);
  return cell;
}

}  // namespace

CommonView common_view_weights(const DetectorRays& rays, const std::vector<uint8_t>& mask, const Rotation& a,
                               const Rotation& b, const CrystalSymmetry& symmetry, int nside) {
  const SphereGrid cells(nside);
  const std::vector<Eigen::Matrix3d> ops = laue_operations(symmetry);
  const std::array<std::vector<long>, 2> cell = {pixel_cells(rays, mask, a, ops, cells),
                                                 pixel_cells(rays, mask, b, ops, cells)};
  std::array<std::vector<double>, 2> density = {std::vector<double>(cells.npix(), 0.0),
                                                std::vector<double>(cells.npix(), 0.0)};
  for (int s = 0; s < 2; ++s)
    for (size_t q = 0; q < cell[s].size(); ++q)
      if (cell[s][q] >= 0) density[s][cell[s][q]] += rays.solid_angle[q];
  CommonView out;
  std::array<std::vector<double>*, 2> weight = {&out.a, &out.b};
  for (int s = 0; s < 2; ++s) {
    weight[s]->assign(rays.direction.size(), 0.0);
    for (size_t q = 0; q < cell[s].size(); ++q)
      if (const long c = cell[s][q]; c >= 0) (*weight[s])[q] = std::min(density[0][c], density[1][c]) / density[s][c];
  }
  double shared = 0, all = 0;
  for (long c = 0; c < cells.npix(); ++c) shared += std::min(density[0][c], density[1][c]), all += density[0][c];
  out.shared = all > 0 ? shared / all : 0.0;
  return out;
}

double position_between_classes(const std::vector<double>& h, const std::vector<double>& class0,
                                const std::vector<double>& class1, const std::vector<double>& signature, size_t bins) {
  double num = 0, den = 0;
  for (size_t f = 0; f * bins < signature.size(); ++f) {
    auto used = [&](size_t i) {
      return signature[i] != 0 && !std::isnan(h[i]) && !std::isnan(class0[i]) && !std::isnan(class1[i]);
    };
    double mh = 0, m0 = 0, m1 = 0, n = 0;
    for (size_t i = f * bins; i < (f + 1) * bins; ++i)
      if (used(i)) mh += h[i], m0 += class0[i], m1 += class1[i], n += 1;
    if (n < 2) continue;
    mh /= n, m0 /= n, m1 /= n;
    for (size_t i = f * bins; i < (f + 1) * bins; ++i) {
      if (!used(i)) continue;
      const double d = (class1[i] - m1) - (class0[i] - m0);
      num += ((h[i] - mh) - (class0[i] - m0)) * d, den += d * d;
    }
  }
  return den > 0 ? num / den : std::nan("");
}

double data_to_model_slope(const std::vector<double>& data, const std::vector<double>& model, size_t from) {
  SlopeSums sums;
  for (size_t i = from; i < data.size(); ++i)
    if (const double x = model[i], y = data[i]; !std::isnan(x) && !std::isnan(y)) sums.add(x, y);
  const double slope = sums.slope();
  return std::isnan(slope) ? 1.0 : slope;
}

}  // namespace orderband
