// The two end members of a map whose phases form patches of several points: a two-class Gaussian
// mixture with a Potts prior on neighbouring labels, fitted by mean-field EM.
#pragma once

#include <cstdint>
#include <vector>

namespace orderband {

/// What the fit sees: per point (row by row, `cols` to a row) its value, its region (grain; 0:
/// left out; each region has its own zero, all share the scale and the noise) and a start for the
/// probability that the point is of the upper class (1 or 0 from a first split is enough).
struct PatchMixtureInputs {
  int cols = 0;
  int regions = 0;
  std::vector<double> value;        ///< per point; NaN: left out
  std::vector<int> region;          ///< per point, 1..regions; 0: left out
  std::vector<double> start_upper;  ///< per point, in [0, 1]
  int max_iterations = 200;
};

struct PatchMixture {
  std::vector<double> zero;   ///< per region (index 1..regions): the lower class's mean; NaN where no point
  double scale = 0;           ///< upper − lower class mean, common to all regions
  double sd = 0;              ///< the noise's spread, common to both classes
  double coupling = 0;        ///< Potts coupling J per neighbour (8 neighbours in the region)
  double field = 0;           ///< the prior's bias toward the upper class, h
  double upper_share = 0;     ///< Σ P(upper) over the points fitted, over their number
  std::vector<double> upper;  ///< per point: P(upper) under the fit (NaN where left out)
  int iterations = 0;
  bool converged = false;
};

/// Each value is z_region + scale·c + noise, c ∈ {0, 1}, the noise Gaussian and the same for both
/// classes; the labels follow P(c) ∝ exp(c·(h + J·Σ_b (2 q_b − 1))) over the point's 8 neighbours b
/// in its region, q_b their probability of the upper class (the mean-field approximation of a Potts
/// field; Zhang, IEEE Trans. Signal Process. 40 (1992) 2570, and Celeux, Forbes & Peyrard, Pattern
/// Recognit. 36 (2003) 131, from memory). E step: a few sweeps of the mean-field equations; M step:
/// zeros, scale and noise by weighted least squares, h and J by maximising the pseudo-likelihood
/// of the soft labels (a two-parameter logistic regression, Newton steps). Where particles span
/// several points the neighbours carry the label that one point's noise hides: the classes are
/// found at separations (scale/sd about 2) where a mixture of independent points shows one
/// component. The scale may come out ≤ 0 where the values hold no patches.
PatchMixture fit_patch_mixture(const PatchMixtureInputs& in);

}  // namespace orderband
