// Internal: the model-led estimator's reference of both pure phases at one orientation.
#pragma once

#include <vector>

#include "fraction_context.hpp"

namespace orderband {

struct FractionReference {
  std::vector<double> r0, r1, a;  // per family: model window signals of both phases, window weights
  double denominator = 0;         // Σ a (r1 − r0) over families
  std::vector<FamilyProfile> profile0, profile1;
  // Per (superlattice family, bin): model means of both phases over the fundamental contrast,
  // and the matched weight W = Δ · n (Δ = m1 − m0, n pixels in the bin: variance ∝ 1/n).
  std::vector<std::vector<double>> m0, m1, w;
  std::vector<std::vector<double>> slope;  // |dm0/du| per bin: sensitivity to an orientation error
  double bin_denominator = 0;              // Σ W Δ
  double c0 = 0, c1 = 0;                   // fundamental band contrast of the pure phases (window estimator)
  double q1 = 1;                           // ordered phase's fundamental profiles regressed on the disordered phase's
};

/// Interior-minus-flank window signals of every family of a profile.
struct WindowSignals {
  std::vector<double> s, var;  // per family: interior − flanks, its variance
  std::vector<int> n_int, n_flank;
};

WindowSignals window_signals(const BandProfiler& profiler, const std::vector<FamilyProfile>& prof, const WindowSpec& w);

/// The fundamental band contrast: the fundamental families' window signals weighted by |F|².
double contrast(const WindowSignals& w, const std::vector<double>& fundamental_weight, size_t first_fundamental);

/// Both phases' processed model patterns at `orientation`, profiled with the same orientation:
/// data and reference must share their binning (bins are much finer than a pixel, so a change of
/// binning by a few thousandths of a degree moves pixels between bins and shifts the bin means).
FractionReference build_reference(const FractionScan& scan, const Rotation& orientation);

}  // namespace orderband
