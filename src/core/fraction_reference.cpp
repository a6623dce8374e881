// The model-led estimator's reference of both pure phases at one orientation.
#include "fraction_reference.hpp"

#include <cmath>

namespace orderband {

WindowSignals window_signals(const BandProfiler& profiler, const std::vector<FamilyProfile>& prof,
                             const WindowSpec& w) {
  WindowSignals out;
  for (const FamilyProfile& p : prof) {
    const FamilyWindows fw = profiler.windows(p, w);
    const bool ok = fw.interior.count > 0 && fw.flanks.count > 0;
    out.s.push_back(ok ? fw.interior.mean - fw.flanks.mean : 0.0);
    out.var.push_back(ok ? fw.interior.variance_of_mean + fw.flanks.variance_of_mean : 0.0);
    out.n_int.push_back(fw.interior.count);
    out.n_flank.push_back(fw.flanks.count);
  }
  return out;
}

double contrast(const WindowSignals& w, const std::vector<double>& fundamental_weight, size_t first_fundamental) {
  double c = 0;
  for (size_t k = first_fundamental; k < w.s.size(); ++k) c += fundamental_weight[k - first_fundamental] * w.s[k];
  return c;
}

namespace {

/// Window estimator: per superlattice family the pure phases' signals over the fundamental
/// contrast and the weights a = (r1 − r0) / variance.
void window_terms(FractionReference& ref, const WindowSignals (&w)[2], size_t nf, size_t first_fundamental) {
  const double c0 = ref.c0, c1 = ref.c1;
  ref.r0.assign(nf, 0.0), ref.r1.assign(nf, 0.0), ref.a.assign(nf, 0.0);
  for (size_t f = 0; f < first_fundamental; ++f) {
    if (c0 <= 0 || c1 <= 0 || w[0].n_int[f] == 0 || w[0].n_flank[f] == 0) continue;
    ref.r0[f] = w[0].s[f] / c0;
    ref.r1[f] = w[1].s[f] / c1;
    const double var = 1.0 / w[0].n_int[f] + 1.0 / w[0].n_flank[f];  // pixel noise alike everywhere
    ref.a[f] = (ref.r1[f] - ref.r0[f]) / var;
    ref.denominator += ref.a[f] * (ref.r1[f] - ref.r0[f]);
  }
}

/// Profile estimator: model means per superlattice bin, the matched weights and the slopes.
void bin_terms(FractionReference& ref, const BandProfiler& profiler, size_t first_fundamental, double bin_u) {
  ref.m0.assign(first_fundamental, {}), ref.m1.assign(first_fundamental, {}), ref.w.assign(first_fundamental, {});
  ref.slope.assign(first_fundamental, {});
  for (size_t f = 0; f < first_fundamental; ++f) {
    ref.m0[f].assign(profiler.bins(), 0.0), ref.m1[f].assign(profiler.bins(), 0.0),
        ref.w[f].assign(profiler.bins(), 0.0);
    if (ref.c0 <= 0 || ref.c1 <= 0) continue;
    for (int b = 0; b < profiler.bins(); ++b) {
      const int pixels = ref.profile0[f].count[b];
      if (pixels == 0) continue;
      // Profile estimator: model means in the units of the disordered model's fundamental bands.
      ref.m0[f][b] = ref.profile0[f].mean(b);
      ref.m1[f][b] = ref.profile1[f].mean(b);
      const double delta = ref.m1[f][b] - ref.m0[f][b];
      ref.w[f][b] = delta * pixels;
      ref.bin_denominator += ref.w[f][b] * delta;
    }
    ref.slope[f].assign(profiler.bins(), 0.0);
    for (int b = 1; b + 1 < profiler.bins(); ++b)
      if (ref.profile0[f].count[b - 1] && ref.profile0[f].count[b + 1])
        ref.slope[f][b] = std::abs(ref.m0[f][b + 1] - ref.m0[f][b - 1]) / (2 * bin_u);
  }
}

/// q1: the ordered phase's fundamental profiles regressed on the disordered phase's.
double ordered_fundamental_ratio(const FractionReference& ref, const BandProfiler& profiler, size_t first_fundamental,
                                 size_t nf) {
  double sxy = 0, sxx = 0;
  for (size_t f = first_fundamental; f < nf; ++f)
    for (int b = 0; b < profiler.bins(); ++b) {
      const int pixels = ref.profile0[f].count[b];
      if (!pixels) continue;
      sxy += pixels * ref.profile1[f].mean(b) * ref.profile0[f].mean(b);
      sxx += pixels * ref.profile0[f].mean(b) * ref.profile0[f].mean(b);
    }
  return sxx > 0 ? sxy / sxx : 1.0;
}

}  // namespace

FractionReference build_reference(const FractionScan& scan, const Rotation& orientation) {
  const FractionFamilies& fam = scan.families;
  FractionReference ref;
  std::vector<float> img(scan.pixels());
  WindowSignals w[2];
  for (int phase = 0; phase < 2; ++phase) {
    scan.model->phase(scan.geometry, orientation, phase == 1, img.data());
    std::vector<FamilyProfile>& prof = phase ? ref.profile1 : ref.profile0;
    scan.profiler.profile(img.data(), scan.pre.mask(), scan.rays, orientation, prof);
    w[phase] = window_signals(scan.profiler, prof, scan.spec.windows);
  }
  ref.c0 = contrast(w[0], fam.fundamental_weight, fam.first_fundamental);
  ref.c1 = contrast(w[1], fam.fundamental_weight, fam.first_fundamental);
  window_terms(ref, w, fam.count(), fam.first_fundamental);
  bin_terms(ref, scan.profiler, fam.first_fundamental, scan.spec.profile.bin_u);
  ref.q1 = ordered_fundamental_ratio(ref, scan.profiler, fam.first_fundamental, fam.count());
  return ref;
}

}  // namespace orderband
