// The frame each grain's data and references are binned in: pattern centre and grain orientations
// refined against the processed model.
#include "fraction_grain_frames.hpp"

#include <algorithm>
#include <array>
#include <cmath>

#include <Eigen/Dense>

#include "orderband/pattern_centre_fit.hpp"
#include "orderband/units.hpp"

namespace orderband {

namespace {

/// Nelder–Mead minimisation over a 3-vector from the origin (initial simplex size `step`),
/// until the simplex is smaller than `tolerance` or after `max_evaluations`.
template <class F>
Eigen::Vector3d nelder_mead_3(F&& f, double step, double tolerance, int max_evaluations) {
  std::array<Eigen::Vector3d, 4> x{Eigen::Vector3d::Zero(), Eigen::Vector3d(step, 0, 0), Eigen::Vector3d(0, step, 0),
                                   Eigen::Vector3d(0, 0, step)};
  std::array<double, 4> y;
  for (int i = 0; i < 4; ++i) y[i] = f(x[i]);
  int evaluations = 4;
  while (evaluations < max_evaluations) {
    std::array<int, 4> order{0, 1, 2, 3};
    std::sort(order.begin(), order.end(), [&](int a, int b) { return y[a] < y[b]; });
    const int best = order[0], worst = order[3], second = order[2];
    double size = 0;
    for (int i = 1; i < 4; ++i) size = std::max(size, (x[order[i]] - x[best]).norm());
    if (size < tolerance) break;
    const Eigen::Vector3d centroid = (x[order[0]] + x[order[1]] + x[order[2]]) / 3;
    const Eigen::Vector3d reflected = centroid + (centroid - x[worst]);
    const double yr = f(reflected);
    ++evaluations;
    if (yr < y[best]) {
      const Eigen::Vector3d expanded = centroid + 2 * (centroid - x[worst]);
      const double ye = f(expanded);
      ++evaluations;
      if (ye < yr)
        x[worst] = expanded, y[worst] = ye;
      else
        x[worst] = reflected, y[worst] = yr;
    } else if (yr < y[second]) {
      x[worst] = reflected, y[worst] = yr;
    } else {
      const Eigen::Vector3d contracted = centroid + 0.5 * (x[worst] - centroid);
      const double yc = f(contracted);
      ++evaluations;
      if (yc < y[worst]) {
        x[worst] = contracted, y[worst] = yc;
      } else {
        for (int i = 1; i < 4; ++i) {
          x[order[i]] = x[best] + 0.5 * (x[order[i]] - x[best]);
          y[order[i]] = f(x[order[i]]);
          ++evaluations;
        }
      }
    }
  }
  int best = 0;
  for (int i = 1; i < 4; ++i)
    if (y[i] < y[best]) best = i;
  return x[best];
}

/// Per grain id: the sum of its points' preprocessed patterns and their count (points with an
/// orientation and a usable pattern).
struct GrainSums {
  std::vector<std::vector<double>> sum;
  std::vector<int> count;
  std::vector<float> mean(int g) const {
    std::vector<float> m(sum[g].size());
    for (size_t q = 0; q < m.size(); ++q) m[q] = static_cast<float>(sum[g][q] / count[g]);
    return m;
  }
};

GrainSums sum_grain_patterns(const FractionScan& scan) {
  GrainSums s;
  s.sum.resize(scan.grains + 1);
  s.count.assign(scan.grains + 1, 0);
  PreprocessedRows pass(*scan.source, scan.grid, scan.pre);
  std::vector<float> pats;
  std::vector<uint8_t> ok;
  int row = 0;
  while (pass.next(pats, ok)) {
    for (int col = 0; col < scan.grid.cols; ++col) {
      const size_t k = scan.grid.index({row, col});
      const int g = scan.ori.grains.id[k];
      if (!ok[col] || g <= 0 || !scan.ori.orientation[k]) continue;
      if (s.sum[g].empty()) s.sum[g].assign(scan.pixels(), 0.0);
      const float* p = pats.data() + static_cast<size_t>(col) * scan.pixels();
      for (size_t q = 0; q < scan.pixels(); ++q) s.sum[g][q] += p[q];
      s.count[g] += 1;
    }
    ++row;
  }
  return s;
}

/// The disordered model processed like the data, as the pattern-centre fit takes it.
ProcessedModel processed_disordered(const FractionScan& scan) {
  return [&scan](const DetectorGeometry& geo, const Rotation& g, float* out) { scan.model->phase(geo, g, false, out); };
}

void refine_pattern_centre(FractionScan& scan, const GrainSums& sums, FractionResults& r) {
  const FractionSpec& spec = scan.spec;
  std::vector<int> order;
  for (int g = 1; g <= scan.grains; ++g)
    if (sums.count[g] >= spec.pattern_centre_min_points) order.push_back(g);
  std::sort(order.begin(), order.end(),
            [&](int a, int b) { return sums.count[a] > sums.count[b] || (sums.count[a] == sums.count[b] && a < b); });
  if (order.size() > static_cast<size_t>(spec.pattern_centre_grains)) order.resize(spec.pattern_centre_grains);
  if (order.empty()) return;
  std::vector<GrainPattern> evidence;
  for (int g : order) evidence.push_back({sums.mean(g), scan.grain_orientation[g]});
  const PatternCentreFit fit =
      fit_pattern_centre(scan.geometry.spec(), evidence, scan.pre.mask(), processed_disordered(scan));
  r.pattern_centre_grains = static_cast<int>(order.size());
  r.pattern_centre_correlation_before = fit.correlation_before;
  r.pattern_centre_correlation_after = fit.correlation_after;
  r.pattern_centre_refined = fit.accepted;
  if (!fit.accepted) return;
  scan.geometry = DetectorGeometry(fit.geometry);
  scan.rays = DetectorRays(scan.geometry);
  r.geometry = fit.geometry;
  for (size_t i = 0; i < order.size(); ++i) scan.grain_orientation[order[i]] = fit.orientation[i];
}

void refine_grain_orientations(FractionScan& scan, const GrainSums& sums) {
  const ProcessedModel model = processed_disordered(scan);
  const std::vector<uint8_t>& mask = scan.pre.mask();
#pragma omp parallel for schedule(dynamic)
  for (int g = 1; g <= scan.grains; ++g) {
    if (sums.count[g] < scan.spec.min_points_for_grain_fit) continue;
    const std::vector<float> mean = sums.mean(g);
    std::vector<float> img(scan.pixels());
    const Rotation start = scan.grain_orientation[g];
    auto cost = [&](const Eigen::Vector3d& v) {
      const Rotation trial = v.norm() > 0 ? Rotation::from_axis_angle(v, v.norm()) * start : start;
      model(scan.geometry, trial, img.data());
      double sxy = 0, sxx = 0, syy = 0;
      for (size_t q = 0; q < img.size(); ++q)
        if (mask[q]) sxy += img[q] * mean[q], sxx += img[q] * img[q], syy += mean[q] * mean[q];
      return -sxy / std::sqrt(std::max(sxx * syy, 1e-300));
    };
    const Eigen::Vector3d best = nelder_mead_3(cost, deg_to_rad(0.1), deg_to_rad(0.0005), 600);
    if (best.norm() > 0) scan.grain_orientation[g] = Rotation::from_axis_angle(best, best.norm()) * start;
  }
}

}  // namespace

void refine_grain_frames(FractionScan& scan, FractionResults& r) {
  r.geometry = scan.geometry.spec();
  const GrainSums sums = sum_grain_patterns(scan);
  if (scan.spec.refine_pattern_centre) refine_pattern_centre(scan, sums, r);
  refine_grain_orientations(scan, sums);
  // Each grain's correction in the sample frame (g_new = g_old · C), the same for every
  // symmetric variant a point's orientation may be written in.
  for (int g = 1; g <= scan.grains; ++g)
    scan.correction[g] = scan.ori.grains.mean[g - 1].inverse() * scan.grain_orientation[g];
}

}  // namespace orderband
