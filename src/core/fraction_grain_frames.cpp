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

/// The disordered model processed like the data, as the pattern-centre fit takes it.
ProcessedModel processed_disordered(const FractionScan& scan) {
  return [&scan](const DetectorGeometry& geo, const Rotation& g, float* out) { scan.model->phase(geo, g, false, out); };
}

void refine_pattern_centre(FractionScan& scan, const GrainPatternSums& sums, FractionResults& r) {
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
void refine_grain_orientations(FractionScan& scan, const GrainPatternSums& sums) {
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
  const GrainPatternSums sums =
      scan.sum_grain_patterns(scan.pre, [&scan](size_t k) { return scan.ori.orientation[k].has_value(); });
  if (scan.spec.refine_pattern_centre) refine_pattern_centre(scan, sums, r);
  refine_grain_orientations(scan, sums);
  // Each grain's correction in the sample frame (g_new = g_old · C), the same for every
  // symmetric variant a point's orientation may be written in.
  for (int g = 1; g <= scan.grains; ++g)
    scan.correction[g] = scan.ori.grains.mean[g - 1].inverse() * scan.grain_orientation[g];
}

}  // namespace orderband
