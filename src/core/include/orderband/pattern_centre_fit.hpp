// Refinement of the pattern centre and detector distance from mean patterns of several grains.
#pragma once

#include <functional>
#include <vector>

#include "orderband/detector_geometry.hpp"
#include "orderband/rotation.hpp"

namespace orderband {

struct PatternCentreFitSpec {
  int max_iterations = 20;
  double step_px = 0.05;        ///< finite-difference step of PC x, y and distance (px)
  double step_rad = 3.5e-4;     ///< finite-difference step of the rotations (0.02°)
  double tolerance_px = 0.002;  ///< stop when an accepted step moves PC and distance less than this
  double tolerance_rad = 1e-5;  ///< with the centre fixed: stop when an accepted step turns less than this
  double max_change_px = 0;     ///< refuse results that move PC or distance further than this (0: 5 % of the width)
};

/// One grain's evidence: the mean of its processed patterns (standardised inside the mask) and
/// its orientation.
struct GrainPattern {
  std::vector<float> mean;
  Rotation orientation;
};

struct PatternCentreFit {
  DetectorGeometrySpec geometry;                         ///< refined (or the start if refused)
  std::vector<Rotation> orientation;                     ///< per grain, refined jointly
  double correlation_before = 0, correlation_after = 0;  ///< mean over the grains
  int iterations = 0;
  bool accepted = false;  ///< false: the start is kept (no improvement, or a change beyond max_change_px)
};

/// The processed model pattern of a grain at an orientation for a geometry (written to `out`,
/// standardised inside the mask like the data).
using ProcessedModel = std::function<void(const DetectorGeometry&, const Rotation&, float* out)>;

/// Levenberg–Marquardt (least_squares.hpp) on PC x, PC y, distance and each grain's orientation, minimising
/// Σ_grains Σ_mask (model − mean pattern)² with both standardised (i.e. maximising their
/// correlations). Several grains of different orientations separate a PC shift, which a rotation
/// almost mimics, from the change of projection it also brings. Forward-difference Jacobian;
/// renders in parallel over grains.
PatternCentreFit fit_pattern_centre(const DetectorGeometrySpec& start, const std::vector<GrainPattern>& grains,
                                    const std::vector<uint8_t>& mask, const ProcessedModel& model,
                                    const PatternCentreFitSpec& spec = {});

/// One grain's orientation alone, the geometry fixed: the same fit (the shared Levenberg–Marquardt,
/// least_squares.hpp) on the grain's rotation only. Returns the start when nothing improves it.
Rotation fit_grain_orientation(const DetectorGeometrySpec& geometry, const GrainPattern& grain,
                               const std::vector<uint8_t>& mask, const ProcessedModel& model,
                               const PatternCentreFitSpec& spec = {});

}  // namespace orderband
