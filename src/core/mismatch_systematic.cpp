// Figures of the mismatch suite (bench/mismatch_bench, 40 × 40 points, 60 × 60 px, 5,000 counts
// per pixel, 16 variants: 14 kinematic renderer variants and 2 many-beam), each variant on three
// layouts of its scenario (SEED_OFFSET 0, 100 and 200: one layout per variant had hidden scans that
// fail, DEVELOPERS change 18). Update them with bench/mismatch_layouts.sh, which pools the
// three, whenever an estimator changes.
#include "orderband/mismatch_systematic.hpp"

#include <cmath>

namespace orderband {

MismatchSystematic mismatch_systematic(const std::string& estimator) {
  const std::string how =
      "bench/mismatch_bench, 16 renderer variants (2 many-beam), each on 3 layouts of its scenario (seed offsets 0, "
      "100 and 200), 40 x 40 points, 60 x 60 px, 5,000 counts/px";
  if (estimator == "learned")
    return {0.031,
            0.113,
            16,
            3,
            39,
            how +
                " (orderband 0.4.4, 2026-12-05, other lattices taken out wherever the footprint reaches another "
                "grain, their shares fitted beside the learned ordering direction, points whose footprint reaches "
                "past the field's edge not learned from, pure-matrix zeros tolerating the noise's false alarms, "
                "grains of one phase named over the crystal directions both grains show, spheres of the 384 / 1,920 "
                "beam set)"};
  if (estimator == "profile")
    return {1.023, 3.877, 16, 3, 12, how + " (orderband 0.4.4, 2026-12-05, spheres of the 384 / 1,920 beam set)"};
  return {std::nan(""), std::nan(""), 0, 0, 0, "not measured for this estimator"};
}

MismatchSystematic mismatch_systematic_of_run(const std::string& estimator, bool rescaled) {
  return mismatch_systematic(rescaled ? "" : estimator);
}

}  // namespace orderband
