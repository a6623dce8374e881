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

EstimatorInUse estimator_in_use(const FractionSpec& spec, size_t points) {
  const bool mixture = spec.end_members == EndMemberMode::mixture;
  if (spec.estimator == FractionEstimator::learned && mixture)
    fail(
        "fraction: mixture end members rescale the model-led estimates; the learned estimator sets its end members "
        "from the scan itself: use one or the other");
  if (spec.estimator != FractionEstimator::automatic) return {spec.estimator, EstimatorChoice::asked_for};
  if (mixture) return {FractionEstimator::profile, EstimatorChoice::mixture_end_members};
  if (points < kLearnedEstimatorMinPoints) return {FractionEstimator::profile, EstimatorChoice::too_few_points};
  return {FractionEstimator::learned, EstimatorChoice::enough_points};
}

FractionResults ordered_fraction_scan(const ScanInputs& inputs, const OrientationResults& ori,
                                      const FractionSpec& requested, const ProgressFn& progress, RowStore* store) {
  if (ori.orientation.size() != inputs.grid().count())
    fail("fraction: orientations for ", ori.orientation.size(), " points, scan has ", inputs.grid().count());
  const EstimatorInUse in_use = estimator_in_use(requested, inputs.grid().count());
  FractionSpec spec = requested;
  spec.estimator = in_use.estimator;
  FractionScan scan(inputs, ori, spec);
  FractionResults r;
  r.estimator = std::string(name_of(spec.estimator));
  r.estimator_requested = std::string(name_of(requested.estimator));
  r.estimator_choice = in_use.why;
  r.zero_is_matrix = spec.estimator == FractionEstimator::learned && spec.end_members != EndMemberMode::regions;
  r.beam_reach = scan.reach;
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

  calibrate_end_members(r, spec, scan.grid, ori.grains, learned);
  summarise_grains_and_matrix(r, spec, scan.grid, ori.grains);
  r.families = family_diagnostics(scan, refs, separation, learned_families);
  return r;
}

}  // namespace orderband
