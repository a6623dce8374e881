// Figures of the mismatch suite (bench/mismatch_bench, 40 × 40 points, 60 × 60 px, 5,000 counts
// per pixel, 16 variants: 14 kinematic renderer variants and 2 many-beam). Update them with the bench output whenever
// an estimator changes.
#include "orderband/mismatch_systematic.hpp"

#include <cmath>

namespace orderband {

MismatchSystematic mismatch_systematic(const std::string& estimator) {
  const std::string how =
      "bench/mismatch_bench, 16 renderer variants (2 many-beam), 40 x 40 points, 60 x 60 px, 5,000 counts/px";
  if (estimator == "learned")
    return {0.019, 0.035, 16, 13,
            how +
                " (orderband 0.4.3, 2026-12-05, other lattices at boundaries taken out by their measured mean "
                "patterns, their shares fitted beside the learned ordering direction, pure-matrix zeros tolerating "
                "the noise's false alarms, grains of one phase named over the crystal directions both grains show, "
                "spheres of the 384 / 1,920 beam set)"};
  if (estimator == "profile")
    return {0.802, 2.311, 16, 4, how + " (orderband 0.3.0, 2026-12-05, spheres of the 384 / 1,920 beam set)"};
  return {std::nan(""), std::nan(""), 0, 0, "not measured for this estimator"};
}

MismatchSystematic mismatch_systematic_of_run(const std::string& estimator, bool rescaled) {
  return mismatch_systematic(rescaled ? "" : estimator);
}

}  // namespace orderband
