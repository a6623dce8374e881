// Internal: what every part of the fraction stage shares. The families it profiles, the kinematic
// model of both phases as the data would show it (detector background, then the data's
// processing), and the scan: its patterns, the reference geometry and each grain's frame.
#pragma once

#include <functional>
#include <map>
#include <memory>
#include <utility>
#include <vector>

#include "orderband/band_model.hpp"
#include "orderband/band_profile.hpp"
#include "orderband/ordered_fraction.hpp"
#include "orderband/ordering_pair.hpp"
#include "orderband/orient.hpp"
#include "orderband/pattern_source.hpp"
#include "orderband/preprocess.hpp"
#include "orderband/rotation.hpp"
#include "orderband/scan_inputs.hpp"
#include "orderband/synth.hpp"

namespace orderband {

/// The plane families the stage profiles: every superlattice-sensitive one (first), then the
/// strongest fundamental ones, which normalise the band contrast.
struct FractionFamilies {
  std::vector<PairFamily> chosen;
  size_t first_fundamental = 0;            ///< index of the first fundamental family in `chosen`
  std::vector<double> fundamental_weight;  ///< per fundamental family: its disordered |F|² share
  std::vector<ProfileFamily> profile;      ///< `chosen` as the profiler takes them
  size_t count() const { return chosen.size(); }
};

/// Chooses the families from the pair's structure factors (never a fixed list); throws
/// orderband::Error if no family is superlattice-sensitive or none is fundamental.
FractionFamilies choose_fraction_families(const OrderingPair& pair, double kv, const FractionSpec& spec);

/// The kinematic model of both phases as the data would show it. The model patterns carry an
/// estimate of the detector background B and are divided by the data's own static background
/// S_data. The data are c·B·I / S_data, the model B̂·I_model / S_data, so where B̂ ≈ B both go
/// through the same division, including the faint band structure that survives the smoothing of
/// the scan mean (superlattice bands of the ordered share among them: a model-made static
/// background would lack those and shift every point's estimate). With the scan mean as static
/// background, S_data = smooth(B·Ī) with Ī the scan's mean band pattern, approximated by the
/// grains' model patterns weighted by their share of the scan, and B̂ is fitted to that.
class FractionModel {
 public:
  /// With `spheres` set, the phases' intensities come from their many-beam spheres (shown with
  /// `sphere_contrast`) instead of the kinematic band models.
  FractionModel(const OrderingPair& pair, double kv, const DetectorGeometry& geometry, const Preprocessor& data,
                const PreprocessSpec& data_spec, const GrainMap& grains, const PhaseSpheres& spheres = {},
                double sphere_contrast = 0.3);
  FractionModel(const FractionModel&) = delete;
  FractionModel& operator=(const FractionModel&) = delete;

  /// A pure phase's pattern at orientation g for the geometry `geo`: detector background, then
  /// `processing`.
  void phase(const Preprocessor& processing, const DetectorGeometry& geo, const Rotation& g, bool ordered,
             float* out) const;
  /// The same with the data's processing.
  void phase(const DetectorGeometry& geo, const Rotation& g, bool ordered, float* out) const {
    phase(processing_, geo, g, ordered, out);
  }
  /// The data's processing for model patterns (no hot-pixel filter; the static background given).
  const PreprocessSpec& processing_spec() const { return spec_; }
  const Preprocessor& processing() const { return processing_; }

 private:
  KinematicBandModel ordered_, disordered_;
  PatternRenderer renderer_;
  size_t pixels_;
  std::vector<float> detector_background_;
  PreprocessSpec spec_;
  Preprocessor processing_;
};

/// Per (frame grain, seen grain): a grain's pattern (the disordered model's, or its measured mean)
/// profiled in the frame of a grain it touches, families × bins means.
using CrossProfiles = std::map<std::pair<int, int>, std::vector<std::vector<double>>>;

/// Per grain id: the sum of a sample of its points' preprocessed patterns, how many were summed,
/// and how many points the sample was drawn from (FractionScan::sum_grain_patterns).
struct GrainPatternSums {
  std::vector<std::vector<double>> sum;
  std::vector<int> count;  ///< patterns summed
  std::vector<int> size;   ///< the grain's points the sample was drawn from
  std::vector<float> mean(int g) const;
};

/// One scan as the fraction stage sees it. Built in three steps: the inputs (constructor), the
/// grain frames (refine_grain_frames), then the estimators read it.
struct FractionScan {
  FractionScan(const ScanInputs& inputs, const OrientationResults& ori, const FractionSpec& spec);

  const ScanConfig& config;
  const OrientationResults& ori;
  const FractionSpec& spec;
  const ScanGrid& grid;
  size_t n;    ///< points
  int grains;  ///< grain count (ids 1 … grains)
  const OrderingPair& pair;
  FractionFamilies families;
  BandProfiler profiler;      ///< the model-led estimator's profiles of the chosen families
  PatternSource* source;      ///< the inputs' (shared by the stages)
  DetectorGeometry geometry;  ///< the reference geometry (refined pattern centre once the frames are)
  DetectorRays rays;
  const Preprocessor& pre;  ///< the inputs' shared preprocessor
  std::unique_ptr<FractionModel> model;
  CrystalSymmetry symmetry;
  /// Per point: the kernel mean of its grain's orientations nearby (optional where none).
  std::vector<std::optional<Rotation>> point_orientation;
  /// Per grain id (index 0 unused): the frame data and references are binned in, and the
  /// correction from the orientation stage's grain mean to it (g_new = g_old · C).
  std::vector<Rotation> grain_orientation, correction;

  GridReach reach;  ///< how far the beam reaches on the grid (beam_reach)

  size_t pixels() const { return source->pixels(); }
  /// The grains other than the point's own that the beam reaches from it (ScanGrid::within_reach),
  /// the one with the most points first; empty if none.
  std::vector<int> grains_within_reach(size_t k) const;
  /// The first of them; 0 if none.
  int neighbour_grain(size_t k) const;
  /// Each grain's disordered model pattern (processed by `processing`) profiled by `by` in the
  /// frame of every grain the beam reaches it from. Where `measured` (index = grain id) holds a
  /// grain's mean measured pattern, that is profiled instead of the model's.
  CrossProfiles cross_profiles(const BandProfiler& by, const Preprocessor& processing,
                               const std::vector<std::vector<float>>& measured = {}) const;
  /// Each grain's patterns (processed by `processing`) summed over at most
  /// spec.grain_pattern_points of its points where `eligible` holds, spread evenly over the grain
  /// (spread_sample) and read in scan order in batches: a mean of a few hundred patterns is as good
  /// as the whole grain's, and a large scan is not read once more.
  GrainPatternSums sum_grain_patterns(const Preprocessor& processing,
                                      const std::function<bool(size_t)>& eligible) const;
};

}  // namespace orderband
