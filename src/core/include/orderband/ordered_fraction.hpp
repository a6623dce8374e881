// The ordered-phase fraction per scan point from the superlattice bands, against an orientation-aware reference.
#pragma once

#include <array>
#include <cmath>
#include <string>
#include <vector>

#include "orderband/band_profile.hpp"
#include "orderband/detector_geometry.hpp"
#include "orderband/end_member_mixture.hpp"
#include "orderband/enum_names.hpp"
#include "orderband/learned_fraction.hpp"
#include "orderband/ordering_pair.hpp"
#include "orderband/orient.hpp"
#include "orderband/row_store.hpp"
#include "orderband/scan_config.hpp"
#include "orderband/sphere.hpp"

namespace orderband {

/// Why a point has no fraction (0: it has one).
enum class FractionReason : uint8_t {
  ok = 0,
  unusable_pattern = 1,
  no_orientation = 2,
  no_band_contrast = 3,  ///< the fundamental bands show no contrast (pattern too poor)
  small_grain = 4,       ///< learned estimator: the grain has too few points away from its boundaries to be placed
};
template <>
struct EnumNames<FractionReason> {
  static constexpr std::array<std::pair<FractionReason, std::string_view>, 5> names{
      {{FractionReason::ok, "measured"},
       {FractionReason::unusable_pattern, "unusable_pattern"},
       {FractionReason::no_orientation, "no_orientation"},
       {FractionReason::no_band_contrast, "no_band_contrast"},
       {FractionReason::small_grain, "grain_too_small"}}};
};

/// How the two end members (pure disordered, pure ordered) are fixed.
enum class EndMemberMode {
  model,    ///< the kinematic model's prediction of both phases at each grain's orientation (default)
  mixture,  ///< then rescaled so that a two-component mixture fit of the scan puts them at 0 and 1
  regions,  ///< then rescaled so that user-given reference regions are at 0 and 1
};
template <>
struct EnumNames<EndMemberMode> {
  static constexpr std::array<std::pair<EndMemberMode, std::string_view>, 3> names{
      {{EndMemberMode::model, "model"}, {EndMemberMode::mixture, "mixture"}, {EndMemberMode::regions, "regions"}}};
};

/// A rectangle of scan points (inclusive), for reference regions.
struct PointRect {
  int row0 = 0, col0 = 0, row1 = 0, col1 = 0;
  bool contains(GridPoint p) const { return p.row >= row0 && p.row <= row1 && p.col >= col0 && p.col <= col1; }
};

/// How the superlattice profiles are combined into one number per point.
enum class FractionEstimator {
  profile,    ///< model-led matched filter over every profile bin of the superlattice families (default)
  learned,    ///< data-led: the response to ordering learned from the scan (learned_fraction.hpp)
  windows,    ///< off-peak windows only: band interior minus flanks per family
  automatic,  ///< learned on scans of at least kLearnedEstimatorMinPoints points, profile below
};
template <>
struct EnumNames<FractionEstimator> {
  static constexpr std::array<std::pair<FractionEstimator, std::string_view>, 4> names{
      {{FractionEstimator::profile, "profile"},
       {FractionEstimator::learned, "learned"},
       {FractionEstimator::windows, "windows"},
       {FractionEstimator::automatic, "auto"}}};
};

/// Points from which FractionEstimator::automatic chooses the learned estimator, and below which
/// the learned estimator's "one phase" is doubtful: on 48 × 48 px patterns (5,000 counts, secondary
/// γ′ of 20–30 %) it found the second phase at 32 × 32 points and missed it at 12 × 12, 16 × 16
/// and 24 × 24 (measured 2026-12-03).
inline constexpr size_t kLearnedEstimatorMinPoints = 1000;

struct FractionSpec {
  FractionEstimator estimator = FractionEstimator::profile;
  double sensitivity_threshold = 0.5;  ///< families at or above: superlattice-sensitive
  double d_min_A = 0.8;
  int fundamental_families = 4;  ///< strongest fundamental families used for the contrast normalisation
  ProfileSpec profile;
  /// The learned estimator's features: coarser bins and the two sides of each band pooled, fewer
  /// unknowns (170 for 17 families) for the discriminant to learn from a scan's own points.
  ProfileSpec learned_profile{2.5, 0.25, true};
  LearnedSpec learned;
  WindowSpec windows;
  EndMemberMode end_members = EndMemberMode::model;
  /// Orientation uncertainty (radians) whose effect on the profiles down-weights the bins where
  /// the reference changes steeply (beside strong fundamental band edges).
  double orientation_uncertainty_rad = 0.1 * M_PI / 180;
  /// Points whose kernel-mean orientation (over this many steps, grains.hpp) lies within
  /// grain_reference_max_rad of their grain's orientation are measured against the grain's
  /// reference and binned with the grain's orientation; the others get a reference of their own at
  /// their kernel-mean orientation (slower: two model patterns per point).
  int orientation_kernel_radius = 2;
  double grain_reference_max_rad = 0.25 * M_PI / 180;
  int min_points_for_grain_fit = 10;
  /// Each grain's mean pattern (for the orientation and pattern-centre fits) from at most this
  /// many of its points, evenly spread over the grain (0: every point).
  size_t grain_pattern_points = 256;
  /// Refine the pattern centre and distance on the mean patterns of up to pattern_centre_grains
  /// grains with at least pattern_centre_min_points points (pattern_centre_fit.hpp).
  bool refine_pattern_centre = true;
  int pattern_centre_grains = 6;
  int pattern_centre_min_points = 30;  ///< grains with fewer points keep the orientation stage's orientation
  /// For EndMemberMode::regions: where each phase is known to be pure. The learned estimator needs
  /// only the disordered one (its ordered end member is the scan's particles); the model-led one both.
  std::vector<PointRect> ordered_regions, disordered_regions;
  std::vector<uint8_t> ordered_mask, disordered_mask;  ///< per point, non-zero: in the region (empty: none)
  /// Whether point k (at `p` on the grid) lies in a reference region or mask of the ordered
  /// (`ordered`) or the disordered phase, whatever the end-member mode.
  bool in_reference(size_t k, GridPoint p, bool ordered) const;
  /// The reference model: the kinematic band model (default), or, with both set, the phases'
  /// many-beam spheres, shown on the detector as 1 + contrast · (I/⟨I⟩ − 1) (as `synth` renders
  /// `model = "many-beam"`). Either supplies the model-led estimator's references and the learned
  /// one's geometry (first guess, ordering signature, transfer between orientations).
  PhaseSpheres reference_spheres;
  double reference_sphere_contrast = 0.3;
};

/// Why the estimator that ran was chosen.
enum class EstimatorChoice {
  asked_for,            ///< named by the caller
  enough_points,        ///< automatic: the learned one, from kLearnedEstimatorMinPoints points
  too_few_points,       ///< automatic: the model-led one, fewer points than that
  mixture_end_members,  ///< automatic: the model-led one, whose estimates mixture end members rescale
};

struct EstimatorInUse {
  FractionEstimator estimator = FractionEstimator::profile;
  EstimatorChoice why = EstimatorChoice::asked_for;
};

/// The estimator that runs on a scan of `points` grid points, and why: the one asked for, or, for
/// FractionEstimator::automatic, the learned one from kLearnedEstimatorMinPoints points up (the
/// model supplies geometry, the data intensities) and the model-led one below (too few points to
/// learn a response from) or where EndMemberMode::mixture asks to rescale the model-led estimates.
/// Throws Error for the learned estimator with mixture end members: it sets its own from the scan.
EstimatorInUse estimator_in_use(const FractionSpec& spec, size_t points);

struct FamilyDiagnostic {
  std::string label;
  bool superlattice = false;
  double sensitivity = 0;
  double weight = 0;      ///< share in the estimator (superlattice families; sums to 1)
  double separation = 0;  ///< d′: end-member difference over the per-point noise of this family alone
  double ordered_level = 0, disordered_level = 0;           ///< model window signal, scan mean over grains
  std::vector<double> profile_u;                            ///< bin centres (θ_B units)
  std::vector<double> profile_ordered, profile_disordered;  ///< model reference profiles (first grain)
  /// Learned estimator: the ordered − disordered profile difference learned from the scan (bin
  /// centres in learned_u, θ_B units; linear preprocessing, relative intensity units).
  std::vector<double> learned_u, learned_difference;
};

/// One grain's estimates: a check on orientation bias (in a grain without resolved particles, or
/// in its matrix away from them, f should match the other grains').
struct GrainFraction {
  size_t points = 0;  ///< measured points
  double mean = 0;    ///< mean unclipped f over them
  /// Matrix points away from particles and grain boundaries (as for the sub-resolution fraction),
  /// their mean and spread.
  size_t matrix_points = 0;
  double matrix_mean = 0, matrix_sd = 0;
  /// Learned estimator: how its first split took the grain, what named it if it holds one phase,
  /// and its position between the two-phase grains' matrix (0) and particles (1).
  GrainKind kind = GrainKind::not_placed;
  GrainNamedBy named_by = GrainNamedBy::none;
  double named_position = std::nan("");
};

struct FractionResults {
  std::string estimator = "profile";            ///< the estimator that ran: "learned", "profile" or "windows"
  std::string estimator_requested = "profile";  ///< as asked for ("auto" chooses by the scan's size)
  EstimatorChoice estimator_choice = EstimatorChoice::asked_for;
  /// Learned, without reference regions: each grain's matrix is the zero, so ordering finer than
  /// the beam inside the matrix (tertiary) is counted as matrix, not measured.
  bool zero_is_matrix = false;
  /// How far the beam reached on the grid (beam_reach of the scan description's footprint): a point
  /// within this reach of another grain sees that grain's lattice too.
  GridReach beam_reach;
  bool two_phases = true;                  ///< learned: a second component was found (false: one phase)
  bool single_phase_ordered = false;       ///< learned, one phase: it is the ordered one
  double learned_separation = 0;           ///< learned: component distance over the majority one's spread
  double learned_evidence = 0;             ///< learned: ΔBIC of two components over one
  double learned_spatial_z = 0;            ///< learned: lag-one z of the map's structure (scan_structure)
  bool learned_placed_by_patches = false;  ///< learned: end members from the map's patches (fit_patch_mixture)
  int learned_iterations = 0;
  /// Learned: per grain id (0 unused), LearnedFraction::grain_kind, named_by and named_position
  /// (copied into `grains` by the summaries).
  std::vector<GrainKind> learned_grain_kind;
  std::vector<GrainNamedBy> learned_named_by;
  std::vector<double> learned_named_position;
  std::vector<float> fraction;       ///< per point, clipped to [0, 1]; NaN where not measured
  std::vector<float> raw;            ///< per point, unclipped estimate (for unbiased means)
  std::vector<float> uncertainty;    ///< per point, standard error of the estimate
  std::vector<float> band_contrast;  ///< per point, fundamental band contrast (pattern quality)
  std::vector<uint8_t> reason;
  EndMember disordered, ordered;                         ///< found from the scan (mixture of the raw estimates)
  double calibration_offset = 0, calibration_scale = 1;  ///< applied after the model reference
  std::vector<FamilyDiagnostic> families;
  std::vector<GrainFraction> grains;  ///< per grain (index id − 1)
  DetectorGeometrySpec geometry;      ///< the geometry the references were made with (refined PC if accepted)
  bool pattern_centre_refined = false;
  int pattern_centre_grains = 0;  ///< grains the pattern-centre fit used (0: not run)
  double pattern_centre_correlation_before = 0, pattern_centre_correlation_after = 0;
  /// Sub-resolution ordered fraction: the mean unclipped estimate over matrix points
  /// (fraction < 0.5) none of whose neighbours is a resolved particle point (fraction ≥ 0.5),
  /// i.e. ordering too fine to resolve (tertiary-size), with its standard error from
  /// 4 × 4-point blocks (neighbouring points are correlated).
  double subresolution_fraction = 0, subresolution_se = 0;
  size_t subresolution_points = 0;
  size_t measured() const;
  double mean_raw() const;  ///< mean over measured points of the unclipped estimate
};

/// The estimator (default: profile), per point in grain G:
///  1. reference: noise-free model patterns of pure disordered and pure ordered phase at G's
///     orientation (first refined against G's mean processed pattern), carrying a fitted detector
///     background and divided by the data's own static background, then processed like the data;
///     crossing bands of other families (the orientation confound) enter data and reference alike;
///  2. band profiles of the superlattice-sensitive families and of the strongest fundamental
///     families, data and reference binned with the same orientation (G's; a point whose
///     kernel-mean orientation is far from G's gets its own reference);
///  3. pattern quality q: the point's fundamental profiles regressed on the disordered
///     reference's, so that pattern quality, surface condition and tilt cancel (at a grain
///     boundary jointly with the neighbour grain's pattern seen in G's frame, which is then
///     taken out of every bin);
///  4. matched filter over the superlattice bins: W = Δ / (noise variance + (slope · δu)²),
///     f = Σ W (y/q − m0) / Σ W [Δ − (q1 − 1) y/q], Δ = m1 − m0, q1 the ordered phase's
///     fundamental contrast relative to the disordered phase's;
///  5. at a grain boundary the same in the neighbour grain's frame, and the two estimates
///     combined by their scale factors (the shares of the two lattices in the pattern).
/// Every step is linear in the mixture of the two phases under the beam, so the estimate is
/// unbiased where the model holds; `end_members` can rescale it by the data. The windows
/// estimator replaces 4 by interior-minus-flank window signals over the fundamental contrast.
FractionResults ordered_fraction_scan(const ScanInputs& inputs, const OrientationResults& orientations,
                                      const FractionSpec& spec = {}, const ProgressFn& progress = {},
                                      RowStore* store = nullptr);

}  // namespace orderband
