// Internal: the frame each grain's data and references are binned in.
#pragma once

#include "fraction_context.hpp"

namespace orderband {

/// Sums every grain's preprocessed patterns (one pass over the scan), then (1) refines the pattern
/// centre and distance on the largest grains' mean patterns jointly with their orientations (a
/// calibration error of a few tenths of a pixel distorts the model against the data and shifts f by
/// a few hundredths), and (2) refines each grain's orientation against the processed model
/// (least squares on a rotation vector against the grain's mean pattern, fit_grain_orientation). Every point of
/// a grain then takes the same correction, which keeps its own deviation from the grain mean
/// (intragranular gradients) but removes a bias that fitting the unprocessed model leaves in the
/// orientation stage. Updates scan.geometry, scan.rays, scan.grain_orientation and
/// scan.correction, and records the pattern-centre fit in `r`.
void refine_grain_frames(FractionScan& scan, FractionResults& r);

}  // namespace orderband
