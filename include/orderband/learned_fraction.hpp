// The data-led ordered fraction: the response to ordering learned from the scan's own band profiles.
#pragma once

#include <cstddef>
#include <cstdint>
#include <vector>

namespace orderband {

/// What the learner sees of one scan. Per point k (n points), `grain[k]` (0: not measured), the
/// cross-fitting fold, a feature vector of `features` floats (the crystal-frame band profiles of
/// every chosen family, binned with the grain's orientation; NaN where a bin holds no pixel) and
/// `first_guess[k]`, the model's projection of the point between its two phases (only its split
/// into "nearer ordered" and "nearer disordered" is used, to start the learning). Points next to
/// another grain, whose patterns may mix two orientations, are scored but not learned from.
struct LearnedInputs {
  size_t points = 0, features = 0;
  int grains = 0;
  std::vector<int> grain;           ///< per point, 1..grains, 0: not measured
  std::vector<uint8_t> fold;        ///< per point, 0 or 1: the two halves for cross-fitting
  std::vector<float> x;             ///< points × features
  std::vector<double> first_guess;  ///< per point
  std::vector<uint8_t> boundary;    ///< per point, 1: next to another grain (scored, not learned from); may be empty
};

/// Per grain (index 1..grains), the mean of every feature over the points the learning uses (0
/// where no point covers the bin) and how many points cover each bin.
struct GrainFeatures {
  std::vector<std::vector<double>> mean, count;
};
GrainFeatures grain_features(const LearnedInputs& in);

struct LearnedSpec {
  int iterations = 6;
  double shrinkage = 0.3;            ///< covariance shrunk toward its diagonal by this share
  double min_evidence = 10.0;        ///< ΔBIC for a second component below which one phase is reported
  double min_second_weight = 0.003;  ///< share of points the second component must hold
  int min_class_points = 8;          ///< per grain and class, to enter the learned difference
};

struct LearnedFraction {
  std::vector<float> f;            ///< per point, unclipped (NaN where not measured)
  std::vector<float> uncertainty;  ///< per point, standard error
  bool two_phases = false;         ///< a second component was found
  bool single_phase_ordered = false;
  double separation = 0;           ///< component distance over the majority component's spread (cross-fitted scores)
  double evidence = 0;             ///< ΔBIC of two components over one (cross-fitted scores)
  double scale = 0;                ///< score units per unit fraction
  std::vector<double> difference;  ///< per feature: learned ordered − disordered profile difference (fold 0)
  int iterations_run = 0;          ///< the round whose result is kept (1-based)
};

/// Learns the direction in profile space that separates the phases (a shrunk linear discriminant
/// iterated with the split it implies, cross-fitted over the two folds so that no point's own noise
/// shapes the direction it is scored with), places every point between the two end members, and
/// decides whether the scan holds one phase or two. Steps:
///  1. first split from the model's first guess, per grain: a grain whose guesses hold two
///     components (ΔBIC ≥ min_evidence) is split midway between them; a grain of one component
///     whose mean guess lies above the median of those cuts holds the ordered phase alone, the
///     points of the others are split at that cut one by one (the model's level and scale are not
///     trusted, only its direction and sign);
///  2. per fold: pooled class difference and within-class covariance of the features (grain and
///     class means removed), direction w = Σ⁻¹ Δ, scores of the other fold's points;
///  3. end members: per grain, the mean score of its matrix points is 0 (a grain of the ordered
///     phase alone, such as a primary particle with its own orientation, anchors its mean at 1); the
///     scale is the score of pure ordered points, the upper component of a Gaussian + uniform
///     mixture of the anchored scores pooled over grains; split again at 0.5 and repeat, keeping
///     the round with the strongest evidence for two components;
///  4. one phase when the evidence for a second component (ΔBIC of two Gaussians + uniform over
///     one) is below min_evidence; which phase from the model's first guess.
/// The disordered end member is the matrix: ordering finer than the beam inside the matrix
/// (tertiary) is not separable from it by the data alone and is counted as disordered.
LearnedFraction learn_fraction(const LearnedInputs& in, const LearnedSpec& spec = {});

}  // namespace orderband
