// Figures of the mismatch suite (bench/mismatch_bench, 40 × 40 points, 60 × 60 px, 5,000 counts
// per pixel, 14 variants). Update them with the bench output whenever an estimator changes.
#include "orderband/mismatch_systematic.hpp"

#include <cmath>

namespace orderband {

MismatchSystematic mismatch_systematic(const std::string& estimator) {
  const std::string how = "bench/mismatch_bench, 14 renderer variants, 40 x 40 points, 60 x 60 px, 5,000 counts/px";
  if (estimator == "learned")
    return {0.022, 0.042, 14, 11, how + " (orderband 0.3.0, 2026-12-03, orientations from the row above)"};
  if (estimator == "profile")
    return {0.657, 2.243, 14, 5, how + " (orderband 0.3.0, 2026-12-03, orientations from the row above)"};
  return {std::nan(""), std::nan(""), 0, 0, "not measured for this estimator"};
}

}  // namespace orderband
