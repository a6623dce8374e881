// The fraction stage's last parts: end members fixed from the scan (mixture or reference
// regions) and the summaries per grain and of the matrix away from particles and grain boundaries.
#pragma once

#include "fraction_reference.hpp"
#include "learned_fraction_scan.hpp"
#include "model_led_fraction.hpp"
#include "orderband/grains.hpp"
#include "orderband/ordered_fraction.hpp"
#include "orderband/scan_grid.hpp"

namespace orderband {

/// The end members: with the model's (default) or the learned estimator's, the raw estimates stand;
/// `EndMemberMode::mixture` rescales them so that a two-component mixture of the scan sits at 0 and
/// 1, `EndMemberMode::regions` so that the reference regions do (with the learned estimator and a
/// disordered region alone, grain by grain: the region sets the zero, the particles stay at 1). Then every measured
/// point's fraction is the rescaled raw value clipped to [0, 1]. Records the mixture of the raw estimates as
/// r.disordered / r.ordered (model-led estimators only).
void calibrate_end_members(FractionResults& r, const FractionSpec& spec, const ScanGrid& grid, const GrainMap& grains,
                           bool learned);

/// Per grain: points and mean fraction; the matrix away from particles and grain boundaries (a
/// point whose eight neighbours are all measured, below one half and of its grain): per grain its
/// points, mean and spread, and
/// over the scan the sub-resolution fraction with a standard error from 4 × 4-point blocks.
void summarise_grains_and_matrix(FractionResults& r, const FractionSpec& spec, const ScanGrid& grid,
                                 const GrainMap& grains);

/// Diagnostics per family: the model's weights and levels averaged over grains by their size, the
/// separation the points showed, the largest grain's reference profiles, and the learned
/// difference (if the learned estimator ran: `learned` non-empty).
std::vector<FamilyDiagnostic> family_diagnostics(const FractionScan& scan, const std::vector<FractionReference>& refs,
                                                 const FamilySeparation& separation, const LearnedFamilies& learned);

}  // namespace orderband
