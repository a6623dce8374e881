// The data-led ordered fraction: the response to ordering learned from the scan's own band profiles.
#pragma once

#include <array>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <vector>

#include "orderband/enum_names.hpp"
#include "orderband/spatial_evidence.hpp"

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
  /// Per point, 1: in a region known to be free of ordering, the user's disordered reference
  /// (scored, never learned from nor part of a grain's zero: it is not the specimen's matrix); may
  /// be empty.
  std::vector<uint8_t> reference;
  /// Per grain (index 1..grains), per feature: the model's expected ordered − disordered
  /// difference on the features that show the new superlattice bands alone (0 elsewhere). Only the
  /// sign of the learned direction is read from it (empty: the sign comes from the first guess).
  std::vector<std::vector<double>> ordering_signature;
  /// Per grain (index 1..grains): the model's features of the pure disordered [0] and ordered [1]
  /// phase at the grain's orientation, and `bins` per family (features = families × bins). The
  /// model supplies how the profiles change from one grain's orientation to another's (geometry),
  /// not how they change with ordering. May be empty.
  std::vector<std::array<std::vector<double>, 2>> model;
  size_t bins = 0;
  /// Where set: per grain h of `one_phase` and grain g of `two_phase` (indices = grain ids), h's
  /// position between the two classes of g's points (`cls` per point: 0, 1, or 2 where not to be
  /// used), 0 at g's class 0 and 1 at its class 1, measured on the data alone (NaN where it cannot
  /// be). Names the grains of one component; where unset or NaN, the model's change between
  /// orientations stands in (name_one_phase_grains).
  std::function<std::vector<std::vector<double>>(
      const std::vector<uint8_t>& one_phase, const std::vector<uint8_t>& two_phase, const std::vector<uint8_t>& cls)>
      position_between;
  size_t superlattice_families = 0;  ///< the first families are the superlattice ones, the rest fundamental
  int cols = 0;  ///< points lie row by row, `cols` to a row: neighbours for the spatial start (0: no neighbours known)
  /// How far the beam reaches, in points along the rows and along the columns (about two standard
  /// deviations of its footprint, at least 1): a matrix point with no ordered point within this reach
  /// is pure matrix. Used only where `cols` is known.
  int reach_rows = 1, reach_cols = 1;
};

/// Per grain (index 1..grains), the mean of every feature over the points the learning uses (0
/// where no point covers the bin) and how many points cover each bin.
struct GrainFeatures {
  std::vector<std::vector<double>> mean, count;
};
GrainFeatures grain_features(const LearnedInputs& in);

struct LearnedSpec {
  int iterations = 1;
  double shrinkage = 0.3;            ///< covariance shrunk toward its diagonal by this share
  double min_evidence = 10.0;        ///< ΔBIC for a second component below which one phase is reported
  double min_second_weight = 0.003;  ///< share of points the second component must hold
  int min_class_points = 8;          ///< per grain and class, to enter the learned difference
  int min_grain_points = 30;         ///< points away from its boundaries a grain needs to be placed
  bool spatial_start = true;         ///< start from the scan's own direction of ordering (spatial_direction)
  /// Lag-one z (scan_structure) from which a grain, or the scan, holds a second phase even where
  /// the scores' distribution shows no second component: particles of a few steps make
  /// neighbouring points alike, noise does not. 5 is about 3 × 10⁻⁷ one-sided for a standard
  /// normal variable, so the two statistics tried and the grains of a scan leave a pure phase's
  /// false alarms rare.
  double min_spatial_z = 5.0;
};

/// The scan's own direction of ordering, learned without the model: noise is independent from
/// point to point while precipitates span several points, so the direction in which neighbouring
/// points' features (each grain's mean removed, every feature scaled by its noise spread from
/// neighbour differences) vary together is the direction of the phase contrast (the leading
/// eigenvector of the symmetrised lag-one cross-covariance; the idea of maximum autocorrelation
/// factors, Switzer & Green 1984, from memory). Returns per point the score along it (NaN where not
/// measured), its sign free; empty if no neighbours are known.
std::vector<double> spatial_direction_scores(const LearnedInputs& in, const GrainFeatures& gf);

/// Whether the scan holds spatial structure, grain by grain and pooled: the larger lag-one z
/// (spatial_evidence, the grains' planes removed) of two scores whose direction no tested point's
/// noise shaped: the model's first guess (a fixed projection) and the spatial direction
/// cross-fitted over the two folds (each fold's points along the direction learned from the other
/// fold's pairs, pairs inside one fold; left out when a fold has fewer pairs than twice the
/// features). A pure phase gives z of about ±1 whatever the model's intensities; particles spanning
/// a few points give z ∝ √pairs, also where one point alone separates the phases at d′ ≈ 2.
SpatialEvidence scan_structure(const LearnedInputs& in, const GrainFeatures& gf);

/// How the first split took a grain (LearnedFraction::grain_kind).
enum class GrainKind : uint8_t {
  not_placed,        ///< no point of it is learned from or scored
  two_components,    ///< split between its two components
  ordered_alone,     ///< one component, the ordered phase
  disordered_alone,  ///< one component, the disordered phase
};
template <>
struct EnumNames<GrainKind> {
  static constexpr std::array<std::pair<GrainKind, std::string_view>, 4> names{
      {{GrainKind::not_placed, "not_placed"},
       {GrainKind::two_components, "two_components"},
       {GrainKind::ordered_alone, "ordered_alone"},
       {GrainKind::disordered_alone, "disordered_alone"}}};
};
/// What named a grain of one component (LearnedFraction::named_by).
enum class GrainNamedBy : uint8_t {
  none,             ///< not a grain of one component
  common_view,      ///< its position between the two-phase grains' classes over the directions both show
  model_transfer,   ///< the same with the model's change between orientations (no comparison possible)
  model_level,      ///< no grain of two components: its level between the model's two phases
  reference_region  ///< it holds part of a disordered reference region
};
template <>
struct EnumNames<GrainNamedBy> {
  static constexpr std::array<std::pair<GrainNamedBy, std::string_view>, 5> names{
      {{GrainNamedBy::none, "none"},
       {GrainNamedBy::common_view, "common_directions"},
       {GrainNamedBy::model_transfer, "model_change_between_orientations"},
       {GrainNamedBy::model_level, "model_level"},
       {GrainNamedBy::reference_region, "reference_region"}}};
};

struct LearnedFraction {
  std::vector<float> f;            ///< per point, unclipped (NaN where not measured)
  std::vector<float> uncertainty;  ///< per point, standard error
  bool two_phases = false;         ///< a second component was found
  bool single_phase_ordered = false;
  double separation = 0;  ///< component distance over the majority component's spread (cross-fitted scores)
  double evidence = 0;    ///< ΔBIC of two components over one (cross-fitted scores)
  double spatial_z = 0;   ///< pooled lag-one z of the scan's structure (scan_structure)
  /// The end members came from the map's patches (fit_patch_mixture), not from the scores' mixture:
  /// the second phase showed in the map's structure alone (evidence < min_evidence, spatial_z ≥
  /// min_spatial_z).
  bool placed_by_patches = false;
  double scale = 0;                ///< score units per unit fraction
  std::vector<double> difference;  ///< per feature: learned ordered − disordered profile difference (fold 0)
  int iterations_run = 0;          ///< the round whose result is kept (1-based)
  /// Per grain (index = grain id, 0 unused): how the first split took it, what named a grain of one
  /// component, and its position between the two-phase grains' classes (0 matrix, 1 particles; the
  /// median over those grains, NaN where not named so).
  std::vector<GrainKind> grain_kind;
  std::vector<GrainNamedBy> named_by;
  std::vector<double> named_position;
};

/// Learns the direction in profile space that separates the phases (a shrunk linear discriminant
/// iterated with the split it implies, cross-fitted over the two folds so that no point's own noise
/// shapes the direction it is scored with), places every point between the two end members, and
/// decides whether the scan holds one phase or two. Steps:
///  1. first split along the scan's own direction of ordering (spatial_direction_scores, its sign
///     from the ordering signature): a grain whose points, or failing that their 3 × 3
///     neighbourhood means, hold two components (ΔBIC ≥ min_evidence), or whose map shows
///     structure (scan_structure, z ≥ min_spatial_z), is split between them; a
///     grain of one component holds one phase alone,
///     which one decided against the grains of two components (its position between their
///     matrix and particles over the crystal directions both grains show, position_between, or
///     failing that the model's change between orientations); without such grains, by the model's
///     level;
///  2. per fold: pooled class difference and within-class covariance of the features (grain and
///     class means removed), direction w = Σ⁻¹ Δ, scores of the other fold's points;
///  3. end members: per grain, the mean score of its matrix points is 0 (a grain of the ordered
///     phase alone, such as a primary particle with its own orientation, anchors its mean at 1); the
///     scale is the score of pure ordered points, the upper component of a Gaussian + uniform
///     mixture of the anchored scores pooled over grains, then zeros and scale refined jointly by
///     EM; with more than one iteration, split again at 0.5 and repeat, keeping the round with the
///     strongest evidence for two components; where the map's structure shows a second phase but
///     the scores' distribution does not (ΔBIC below min_evidence), zeros and scale come from the
///     map's patches instead (fit_patch_mixture: neighbouring points tend to share their phase);
///  4. one phase when neither the scores' distribution (ΔBIC of two Gaussians + uniform over one,
///     at least min_evidence) nor the map's structure (scan_structure, pooled z at least
///     min_spatial_z) shows a second phase; which phase from the grains' levels with the data's
///     band scale.
/// The disordered end member is the matrix: ordering finer than the beam inside the matrix
/// (tertiary) is not separable from it by the data alone and is counted as disordered.
LearnedFraction learn_fraction(const LearnedInputs& in, const LearnedSpec& spec = {});

}  // namespace orderband
