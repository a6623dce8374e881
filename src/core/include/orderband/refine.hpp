// Orientation refinement: least-squares fit of the kinematic band model to the pattern.
#pragma once

#include <vector>

#include "orderband/band_model.hpp"
#include "orderband/sphere.hpp"

namespace orderband {

struct RefineSpec {
  int max_iterations = 6;
  double converged_deg = 0.005;  ///< stop when the update is smaller
  double max_step_deg = 2.0;     ///< updates are clipped to this angle
};

struct RefineResult {
  Rotation orientation;
  double correlation = 0;  ///< Pearson r between pattern and fitted model inside the mask
  int iterations = 0;
  bool converged = false;
};

/// Fits P ≈ a·M(g) + b over the mask, M the model intensity of the parent
/// phase (band_model.hpp) at the pixels' crystal directions, by Levenberg–Marquardt
/// (least_squares.hpp; nearly Gauss–Newton, but a step must lower the misfit) in δg with a and b
/// solved in closed form at each point, with δg a small rotation of the crystal frame: the
/// derivative of a band term w·p(α/θ_B) is w·p′(u)/θ_B · (c × n)/cos α.
/// Band centres are symmetric under the pattern's background division, so
/// fitting the unfiltered model to the preprocessed pattern leaves the
/// orientation unbiased.
class OrientationRefiner {
 public:
  OrientationRefiner(const KinematicBandModel& model, const DetectorRays& rays, const std::vector<uint8_t>& mask,
                     const RefineSpec& spec = {});
  RefineResult refine(const float* pattern, const Rotation& start) const;
  /// Correlation of the pattern with the model at g (no fitting). `coarse`
  /// uses every second mask pixel (for ranking candidate orientations).
  double correlation(const float* pattern, const Rotation& g, bool coarse = false) const;

 private:
  void evaluate(const Rotation& g, std::vector<double>& model, std::vector<Eigen::Vector3d>* gradient,
                int stride = 1) const;
  const KinematicBandModel& model_;
  RefineSpec spec_;
  std::vector<Eigen::Vector3f> dirs_;  ///< mask pixels, sample frame
  std::vector<uint32_t> index_;
  std::vector<double> derivative_table_;
  double table_scale_ = 1;
};

}  // namespace orderband
