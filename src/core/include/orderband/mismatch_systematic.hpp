// The systematic uncertainty of the ordered area fraction from model mismatch: the spread of the
// area error over the renderer variants of the mismatch suite (bench/mismatch_bench), per estimator.
#pragma once

#include <string>

namespace orderband {

/// What the mismatch suite measured for one estimator: the area error (measured − true) over
/// scans of renderer variants the estimator is never told (band shapes, weight exponents, family
/// contrasts, γ′/γ fundamental ratios, detector response, misfit, beam footprint, pattern-centre
/// error). The RMS is a systematic uncertainty beside the statistical interval: it does not shrink
/// with more points, and it is common to every trial analysed alike (it cancels, to first order,
/// in comparisons of trials). Real, dynamical patterns differ from the kinematic renderer more
/// than any variant does, so it is a lower bound.
struct MismatchSystematic {
  double rms = 0;           ///< RMS area error over the suite's scans
  double largest = 0;       ///< largest |area error|
  int variants = 0;         ///< renderer variants in the suite
  int layouts = 1;          ///< scans per variant, each another layout of its scenario (the bench's seed offsets)
  int within_003 = 0;       ///< scans with |area error| ≤ 0.03, of variants × layouts
  std::string measured_by;  ///< how and when the figures were measured
};

/// The figures of the last full run of the suite for "learned" or "profile" (the model-led
/// estimator); other estimators (reference regions) have none: rms NaN.
MismatchSystematic mismatch_systematic(const std::string& estimator);

/// The systematic that applies to one run: the suite's figures for the estimator that ran where
/// its end members came from the model or from its own placement; none (rms NaN) where reference
/// regions or a mixture fit rescaled them (`rescaled`), a set-up the suite's figures do not
/// describe.
MismatchSystematic mismatch_systematic_of_run(const std::string& estimator, bool rescaled);

}  // namespace orderband
