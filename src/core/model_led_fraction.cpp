// The model-led estimators (profile and windows), point by point against the references.
#include "model_led_fraction.hpp"

#include <algorithm>
#include <cmath>

#include "grain_profilers.hpp"
#include "row_loop.hpp"

namespace orderband {

namespace {

struct PointFit {
  bool ok = false;
  double q = 0, f = 0, var = 0;
};

/// The profile estimator at one point in one frame. The pattern quality q regresses the point's
/// fundamental profiles on the disordered model's (with a second lattice's pattern `cross` beside
/// it at a grain boundary, fitted jointly and taken out of every bin); then the matched filter over
/// the superlattice bins with weights W = Δ / (noise variance + systematic variance), the latter
/// from the reference's slope times the orientation uncertainty in units of θ_B. `fam_num` and
/// `fam_den` (optional) collect each family's signal over noise.
PointFit fit_point(const FractionScan& scan, const std::vector<FamilyProfile>& prof, const FractionReference& ref,
                   const std::vector<std::vector<double>>* cross, double pixel_sd, double* fam_num = nullptr,
                   double* fam_den = nullptr) {
  const size_t first_fundamental = scan.families.first_fundamental, nf = scan.families.count();
  const int bins = scan.profiler.bins();
  PointFit out;
  // Fundamental bins: y = q m0 (+ c n2), least squares with the pixel counts as weights.
  double smm = 0, smn = 0, snn = 0, sym = 0, syn = 0;
  for (size_t f = first_fundamental; f < nf; ++f)
    for (int b = 0; b < bins; ++b) {
      const int pixels = ref.profile0[f].count[b];
      if (!pixels || prof[f].weight[b] <= 0) continue;
      const double y = prof[f].mean(b), m0 = ref.profile0[f].mean(b), n2 = cross ? (*cross)[f][b] : 0.0;
      smm += pixels * m0 * m0, smn += pixels * m0 * n2, snn += pixels * n2 * n2;
      sym += pixels * y * m0, syn += pixels * y * n2;
    }
  double q = 0, c = 0;
  const double det = smm * snn - smn * smn;
  if (cross && det > 1e-9 * smm * snn) {
    q = (sym * snn - syn * smn) / det;
    c = (smm * syn - smn * sym) / det;
  } else if (smm > 0) {
    q = sym / smm;
  }
  out.q = q;
  if (!(q > 0.05)) return out;
  double num = 0, var = 0, D = 0, wy = 0;
  for (size_t f = 0; f < first_fundamental; ++f) {
    const FamilyProfile& p = prof[f];
    const double du = scan.spec.orientation_uncertainty_rad / scan.families.profile[f].theta_b;
    double f_num = 0, f_var = 0, f_sig = 0;
    for (int b = 0; b < bins; ++b) {
      if (ref.w[f][b] == 0 || p.weight[b] <= 0) continue;
      const double x = (p.mean(b) - (cross ? c * (*cross)[f][b] : 0.0)) / q;
      const double n_eff = p.weight[b] * p.weight[b] / std::max(p.weight_sq[b], 1e-300);
      const double vb = pixel_sd * pixel_sd / n_eff / (q * q);
      const double vs = std::pow(ref.slope[f][b] * du, 2);
      const double delta = ref.m1[f][b] - ref.m0[f][b];
      const double wb = delta / (vb + vs);
      f_num += wb * (x - ref.m0[f][b]);
      f_var += wb * wb * vb;
      f_sig += wb * delta;
      wy += wb * x;
    }
    num += f_num, var += f_var, D += f_sig;
    if (fam_num && f_var > 0) fam_num[f] += f_sig / std::sqrt(f_var), fam_den[f] += 1;
  }
  if (!(D > 0)) return out;
  // A mixture's fundamental bands are (1 − f + f q1) times the disordered model's, so
  // y (1 − f + f q1) = (1 − f) m0 + f m1 in every bin; summed with the weights:
  // f = Σ W (y − m0) / Σ W [(m1 − m0) − (q1 − 1) y]  (= Σ W (y − m0) / Σ W Δ for q1 = 1).
  const double denom = D - (ref.q1 - 1) * wy;
  out.ok = true;
  out.f = num / denom;
  out.var = var / (denom * denom);
  return out;
}

/// Pixel noise of a pattern from differences of horizontal neighbours inside the mask (bands vary
/// little from one pixel to the next): σ = 1.4826 · MAD / √2.
double pixel_noise_sd(const float* pattern, const std::vector<uint8_t>& mask, int width) {
  const size_t px = mask.size();
  std::vector<float> diffs;
  diffs.reserve(px);
  for (size_t q = 0; q + 1 < px; ++q)
    if ((q + 1) % width && mask[q] && mask[q + 1]) diffs.push_back(std::abs(pattern[q + 1] - pattern[q]));
  std::nth_element(diffs.begin(), diffs.begin() + diffs.size() / 2, diffs.end());
  return diffs.empty() ? 0.0 : 1.4826 * diffs[diffs.size() / 2] / std::sqrt(2.0);
}

/// The state one row's points share: the scan, the references and the boundary profiles.
struct PointEstimator {
  const FractionScan& scan;
  const std::vector<FractionReference>& refs;
  const CrossProfiles& cross_profiles;
  const GrainProfilers& at_grain;  ///< profiles at a grain's orientation
  FractionResults& r;

  /// Off-peak windows only: interior minus flanks per family, over the fundamental contrast.
  void windows(size_t k, const std::vector<FamilyProfile>& prof, const FractionReference& ref, double* fam_num,
               double* fam_den) const {
    const FractionFamilies& fam = scan.families;
    const WindowSignals w = window_signals(scan.profiler, prof, scan.spec.windows);
    const double c = contrast(w, fam.fundamental_weight, fam.first_fundamental);
    r.band_contrast[k] = static_cast<float>(c);
    if (!(c > 0) || !(ref.denominator > 0)) {
      r.reason[k] = static_cast<uint8_t>(FractionReason::no_band_contrast);
      return;
    }
    double num = 0, var = 0;
    for (size_t f = 0; f < fam.first_fundamental; ++f) {
      if (ref.a[f] == 0) continue;
      const double rf = w.s[f] / c, vf = w.var[f] / (c * c);
      num += ref.a[f] * (rf - ref.r0[f]);
      var += ref.a[f] * ref.a[f] * vf;
      fam_num[f] += std::abs(ref.r1[f] - ref.r0[f]);
      fam_den[f] += std::sqrt(vf);
    }
    r.raw[k] = static_cast<float>(num / ref.denominator);
    r.uncertainty[k] = static_cast<float>(std::sqrt(var) / ref.denominator);
  }

  /// The profile estimator. At a grain boundary the beam sees a second lattice: its pattern,
  /// profiled in this grain's frame, is fitted away, and the same is done in the other grain's
  /// frame; the two estimates are combined by their scale factors.
  void profiles(size_t k, int g, bool own, const float* pattern, std::vector<FamilyProfile>& prof,
                const FractionReference& ref, double* fam_num, double* fam_den) const {
    const double pixel_sd = pixel_noise_sd(pattern, scan.pre.mask(), scan.source->width());
    const int other = own ? 0 : scan.neighbour_grain(k);
    const auto cross = other ? cross_profiles.find({g, other}) : cross_profiles.end();
    const PointFit fit = fit_point(scan, prof, ref, cross != cross_profiles.end() ? &cross->second : nullptr, pixel_sd,
                                   fam_num, fam_den);
    r.band_contrast[k] = static_cast<float>(fit.q);
    if (!fit.ok) {
      r.reason[k] = static_cast<uint8_t>(FractionReason::no_band_contrast);
      return;
    }
    double f = fit.f, v = fit.var;
    if (cross != cross_profiles.end()) {
      at_grain.at_grain(other)->profile(pattern, prof);
      const PointFit second = fit_point(scan, prof, refs[other], &cross_profiles.at({other, g}), pixel_sd);
      // Both patterns are standardised, so the two scale factors share the beam's volume.
      const double a = std::max(fit.q, 0.0), b = second.ok ? std::max(second.q, 0.0) : 0.0;
      if (a + b > 0) {
        f = (a * fit.f + b * (second.ok ? second.f : 0.0)) / (a + b);
        v = (a * a * fit.var + b * b * (second.ok ? second.var : 0.0)) / ((a + b) * (a + b));
      }
    }
    r.raw[k] = static_cast<float>(f);
    r.uncertainty[k] = static_cast<float>(std::sqrt(v));
  }

  /// One point: its reference (the grain's, unless this point's orientation, kernel mean
  /// corrected like its grain, is too far from the grain's for one reference to serve: then its
  /// own), its profiles, then the chosen estimator.
  void point(size_t k, bool usable, const float* pattern, std::vector<FamilyProfile>& prof, double* fam_num,
             double* fam_den) const {
    if (!usable) {
      r.reason[k] = static_cast<uint8_t>(FractionReason::unusable_pattern);
      return;
    }
    const int g = scan.ori.grains.id[k];
    if (!scan.ori.orientation[k] || g <= 0) {
      r.reason[k] = static_cast<uint8_t>(FractionReason::no_orientation);
      return;
    }
    const Rotation orientation = *scan.point_orientation[k] * scan.correction[g];
    const bool own =
        scan.symmetry.misorientation_angle(orientation, scan.grain_orientation[g]) > scan.spec.grain_reference_max_rad;
    FractionReference own_ref;
    if (own) own_ref = build_reference(scan, orientation);
    const FractionReference& ref = own ? own_ref : refs[g];
    if (own)
      scan.profiler.profile(pattern, scan.pre.mask(), scan.rays, orientation, prof);
    else
      at_grain.at_grain(g)->profile(pattern, prof);
    if (scan.spec.estimator == FractionEstimator::windows)
      windows(k, prof, ref, fam_num, fam_den);
    else
      profiles(k, g, own, pattern, prof, ref, fam_num, fam_den);
  }
};

}  // namespace

FamilySeparation estimate_model_led(const FractionScan& scan, const std::vector<FractionReference>& refs,
                                    FractionResults& r, const ProgressFn& progress, RowStore* store) {
  const ScanGrid& grid = scan.grid;
  const size_t nf = scan.families.count(), px = scan.pixels();
  const CrossProfiles cross_profiles = scan.cross_profiles(scan.profiler, scan.model->processing());
  const GrainProfilers at_grain(scan.profiler, scan.pre.mask(), scan.rays, scan.grain_orientation);
  const PointEstimator estimator{scan, refs, cross_profiles, at_grain, r};
  FamilySeparation sep{std::vector<double>(nf, 0.0), std::vector<double>(nf, 0.0)};
  std::vector<double> row_num(nf, 0.0), row_den(nf, 0.0);  // this row's family separations
  PreprocessedRows rows(*scan.source, grid, scan.pre);
  for_each_scan_row(
      rows, grid, store, "fraction", progress,
      [&](int row, ByteReader& in) {
        for (int col = 0; col < grid.cols; ++col) {
          const size_t k = grid.index({row, col});
          r.reason[k] = in.get<uint8_t>();
          r.raw[k] = in.get<float>();
          r.uncertainty[k] = in.get<float>();
          r.band_contrast[k] = in.get<float>();
        }
        for (size_t f = 0; f < nf; ++f) sep.num[f] += in.get<double>(), sep.den[f] += in.get<double>();
      },
      [&](int row, const std::vector<float>& patterns, const std::vector<uint8_t>& usable) {
        std::fill(row_num.begin(), row_num.end(), 0.0), std::fill(row_den.begin(), row_den.end(), 0.0);
        // Per-point contributions, summed afterwards in column order: the same sums for any thread count.
        std::vector<double> point_num(static_cast<size_t>(grid.cols) * nf, 0.0), point_den(point_num.size(), 0.0);
#pragma omp parallel
        {
          std::vector<FamilyProfile> prof;
#pragma omp for schedule(dynamic)
          for (int col = 0; col < grid.cols; ++col)
            estimator.point(grid.index({row, col}), usable[col], patterns.data() + static_cast<size_t>(col) * px, prof,
                            point_num.data() + static_cast<size_t>(col) * nf,
                            point_den.data() + static_cast<size_t>(col) * nf);
        }
        for (int col = 0; col < grid.cols; ++col)
          for (size_t f = 0; f < nf; ++f)
            row_num[f] += point_num[static_cast<size_t>(col) * nf + f],
                row_den[f] += point_den[static_cast<size_t>(col) * nf + f];
        for (size_t f = 0; f < nf; ++f) sep.num[f] += row_num[f], sep.den[f] += row_den[f];
      },
      [&](int row, ByteWriter& out) {
        for (int col = 0; col < grid.cols; ++col) {
          const size_t k = grid.index({row, col});
          out.put<uint8_t>(r.reason[k]);
          out.put<float>(r.raw[k]);
          out.put<float>(r.uncertainty[k]);
          out.put<float>(r.band_contrast[k]);
        }
        for (size_t f = 0; f < nf; ++f) out.put<double>(row_num[f]), out.put<double>(row_den[f]);
      });
  return sep;
}

}  // namespace orderband
