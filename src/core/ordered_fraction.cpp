// Ordered-phase fraction per point.
#include "orderband/ordered_fraction.hpp"

#include <algorithm>
#include <cmath>

#include "fraction_context.hpp"
#include "fraction_grain_frames.hpp"
#include "fraction_reference.hpp"
#include "fraction_summaries.hpp"
#include "learned_fraction_scan.hpp"
#include "model_led_fraction.hpp"
#include "orderband/error.hpp"

namespace orderband {

size_t FractionResults::measured() const {
  return static_cast<size_t>(std::count(reason.begin(), reason.end(), static_cast<uint8_t>(FractionReason::ok)));
}

double FractionResults::mean_raw() const {
  double s = 0;
  size_t n = 0;
  for (size_t k = 0; k < raw.size(); ++k)
    if (reason[k] == static_cast<uint8_t>(FractionReason::ok)) s += raw[k], ++n;
  return n ? s / n : std::nan("");
}

std::array<EndMember, 2> two_component_mixture(const std::vector<double>& v) {
  // Two Gaussians (the end members) plus a uniform component over the range of the values for the
  // points that mix both phases under the beam (particle edges), fitted by EM.
  std::array<EndMember, 2> c;
  if (v.size() < 4) return c;
  std::vector<double> sorted = v;
  std::sort(sorted.begin(), sorted.end());
  const double lo = sorted[sorted.size() / 200], hi = sorted[sorted.size() - 1 - sorted.size() / 200];
  const double range = std::max(hi - lo, 1e-6);
  // Start from the model's end members, 0 and 1 (the values are in those units).
  c[0] = {0.0, 0.2, 0.45};
  c[1] = {1.0, 0.2, 0.45};
  double uniform = 0.1;
  std::vector<double> r0(v.size()), r1(v.size());
  for (int it = 0; it < 300; ++it) {
    for (size_t k = 0; k < v.size(); ++k) {
      double p[2];
      for (int j = 0; j < 2; ++j)
        p[j] =
            c[j].weight / (c[j].sd * std::sqrt(2 * M_PI)) * std::exp(-0.5 * std::pow((v[k] - c[j].mean) / c[j].sd, 2));
      const double pu = (v[k] >= lo && v[k] <= hi) ? uniform / range : 0.0;
      const double total = std::max(p[0] + p[1] + pu, 1e-300);
      r0[k] = p[0] / total, r1[k] = p[1] / total;
    }
    std::array<EndMember, 2> next;
    double used = 0;
    for (int j = 0; j < 2; ++j) {
      const std::vector<double>& r = j ? r1 : r0;
      double w = 0, m = 0;
      for (size_t k = 0; k < v.size(); ++k) w += r[k], m += r[k] * v[k];
      if (w < 1e-9) return c;
      m /= w;
      double ss = 0;
      for (size_t k = 0; k < v.size(); ++k) ss += r[k] * (v[k] - m) * (v[k] - m);
      next[j] = {m, std::max(std::sqrt(ss / w), 1e-4 * range), w / v.size()};
      used += next[j].weight;
    }
    const bool done = std::abs(next[0].mean - c[0].mean) + std::abs(next[1].mean - c[1].mean) < 1e-9;
    c = next;
    uniform = std::max(1e-6, 1 - used);
    if (done) break;
  }
  if (c[0].mean > c[1].mean) std::swap(c[0], c[1]);
  return c;
}

FractionResults ordered_fraction_scan(const ScanInputs& inputs, const OrientationResults& ori, const FractionSpec& spec,
                                      const ProgressFn& progress, RowStore* store) {
  if (ori.orientation.size() != inputs.grid().count())
    fail("fraction: orientations for ", ori.orientation.size(), " points, scan has ", inputs.grid().count());
  FractionScan scan(inputs, ori, spec);
  FractionResults r;
  refine_grain_frames(scan, r);
  std::vector<FractionReference> refs(scan.grains + 1);
#pragma omp parallel for schedule(dynamic)
  for (int g = 1; g <= scan.grains; ++g) refs[g] = build_reference(scan, scan.grain_orientation[g]);

  const size_t n = scan.n;
  r.fraction.assign(n, std::nanf(""));
  r.raw.assign(n, std::nanf(""));
  r.uncertainty.assign(n, std::nanf(""));
  r.band_contrast.assign(n, std::nanf(""));
  r.reason.assign(n, static_cast<uint8_t>(FractionReason::ok));
  const bool learned = spec.estimator == FractionEstimator::learned;
  FamilySeparation separation{std::vector<double>(scan.families.count(), 0.0),
                              std::vector<double>(scan.families.count(), 0.0)};
  LearnedFamilies learned_families;
  if (learned)
    learned_families = estimate_learned(scan, r, progress, store);
  else
    separation = estimate_model_led(scan, refs, r, progress, store);

  calibrate_end_members(r, spec, scan.grid, learned);
  summarise_grains_and_matrix(r, scan.grid, ori.grains);
  r.families = family_diagnostics(scan, refs, separation, learned_families);
  return r;
}

}  // namespace orderband
