// The frame each grain's data and references are binned in: pattern centre and grain orientations
// refined against the processed model.
#include "fraction_grain_frames.hpp"

#include <algorithm>
#include <cmath>

#include <Eigen/Dense>

#include "orderband/pattern_centre_fit.hpp"
#include "orderband/units.hpp"

namespace orderband {

namespace {

/// Per grain id: the sum of its points' preprocessed patterns and their count (points with an
/// orientation and a usable pattern).
struct GrainSums {
  std::vector<std::vector<double>> sum;
  std::vector<int> count;  ///< patterns summed
  std::vector<int> size;   ///< the grain's points with an orientation
  std::vector<float> mean(int g) const {
    std::vector<float> m(sum[g].size());
    for (size_t q = 0; q < m.size(); ++q) m[q] = static_cast<float>(sum[g][q] / count[g]);
    return m;
  }
};

/// Each grain's points that can enter its mean pattern (an orientation), in scan order, at most
/// spec.grain_pattern_points of them spread evenly over the grain.
std::vector<size_t> grain_pattern_points(const FractionScan& scan, std::vector<int>& size) {
  std::vector<std::vector<size_t>> members(scan.grains + 1);
  for (size_t k = 0; k < scan.n; ++k) {
    const int g = scan.ori.grains.id[k];
    if (g > 0 && scan.ori.orientation[k]) members[g].push_back(k);
  }
  std::vector<size_t> chosen;
  size.assign(scan.grains + 1, 0);
  for (int g = 0; g <= scan.grains; ++g) size[g] = static_cast<int>(members[g].size());
  for (const auto& m : members) {
    const std::vector<size_t> s = spread_sample(m, scan.spec.grain_pattern_points);
    chosen.insert(chosen.end(), s.begin(), s.end());
  }
  std::sort(chosen.begin(), chosen.end());
  return chosen;
}

/// The grains' mean patterns from a sample of their points (a mean of a few hundred patterns
/// fits the pattern centre and the grain's orientation as well as the whole grain's, and a large
/// scan is not read once more), read in scan order in batches.
GrainSums sum_grain_patterns(const FractionScan& scan) {
  GrainSums s;
  s.sum.resize(scan.grains + 1);
  s.count.assign(scan.grains + 1, 0);
  const std::vector<size_t> points = grain_pattern_points(scan, s.size);
  PreprocessedPoints reader(*scan.source, scan.grid, scan.pre);
  reader.load_in_batches(
      points, 256,
      [&](const std::vector<size_t>& batch, const std::vector<float>& pats, const std::vector<uint8_t>& ok) {
        for (size_t i = 0; i < batch.size(); ++i) {
          if (!ok[i]) continue;
          const int g = scan.ori.grains.id[batch[i]];
          if (s.sum[g].empty()) s.sum[g].assign(scan.pixels(), 0.0);
          const float* p = pats.data() + i * scan.pixels();
          for (size_t q = 0; q < scan.pixels(); ++q) s.sum[g][q] += p[q];
          s.count[g] += 1;
        }
      });
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
            [&](int a, int b) { return sums.size[a] > sums.size[b] || (sums.size[a] == sums.size[b] && a < b); });
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

/// Each grain's orientation fitted to its mean pattern (the centre fixed), by the same
/// least-squares fit as the pattern centre's.
void refine_grain_orientations(FractionScan& scan, const GrainSums& sums) {
  const ProcessedModel model = processed_disordered(scan);
  const std::vector<uint8_t>& mask = scan.pre.mask();
  const DetectorGeometrySpec geometry = scan.geometry.spec();
#pragma omp parallel for schedule(dynamic)
  for (int g = 1; g <= scan.grains; ++g) {
    if (sums.count[g] < scan.spec.min_points_for_grain_fit) continue;
    scan.grain_orientation[g] = fit_grain_orientation(geometry, {sums.mean(g), scan.grain_orientation[g]}, mask, model);
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
