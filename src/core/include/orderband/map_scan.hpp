// The whole per-scan analysis: orientations, ordered fraction, precipitates, mean spheres.
#pragma once

#include <functional>
#include <map>
#include <string>

#include "orderband/detection_limit.hpp"
#include "orderband/ordered_fraction.hpp"
#include "orderband/particles.hpp"
#include "orderband/pattern_sample.hpp"
#include "orderband/sphere.hpp"
#include "orderband/stereology.hpp"

namespace orderband {

struct MapOptions {
  OrientSpec orient;
  /// The estimator as the command line chooses it by default: learned from
  /// kLearnedEstimatorMinPoints points up, model-led below.
  FractionSpec fraction = [] {
    FractionSpec f;
    f.estimator = FractionEstimator::automatic;
    return f;
  }();
  /// min_points 0 (the default here): from the detection limit, as the command line does it.
  SegmentSpec segment = [] {
    SegmentSpec s;
    s.min_points = 0;
    return s;
  }();
  DetectionLimitSpec detection;
  SizeClasses classes;
  int e562_tiles = 4;       ///< fields per side for the ASTM E562 interval
  int bootstrap_block = 8;  ///< points per block side for the bootstrap interval
  int bootstrap_resamples = 1000;
  int unfold_classes = 10;  ///< Schwartz–Saltykov classes for the secondary particles
  bool mean_spheres = true;
  /// Each mean sphere from at most this many points of its class, evenly spread over the scan
  /// (0: every point of the class).
  size_t mean_sphere_points = 2048;
};

struct MapResults {
  MapOptions options;  ///< as applied: the scan description's choices included (options_for_scan)
  /// The input files' hashes by path, as read with the inputs (ScanInputs::file_hashes).
  std::map<std::string, std::string> input_file_hashes;
  std::string ordered_phase, disordered_phase;
  PatternSample pattern_sample;             ///< raw patterns read before the run (stored width, hot pixels)
  std::vector<std::string> input_warnings;  ///< about the inputs, found before the run (hot pixels)
  OrientationResults orientations;
  FractionResults fraction;
  Segmentation segmentation;
  std::vector<ClassStats> classes;
  FractionCI e562, bootstrap;
  DetectionLimit detection;
  Unfolding unfolding;  ///< of the secondary class's section diameters
  /// 3-D sizes of the secondary class from its resolved sections (truncated at the detection limit).
  SphereSizeFit secondary_lognormal, secondary_lsw;
  /// The determined fit with the lower Akaike information criterion (null when neither is determined).
  const SphereSizeFit* secondary_preferred() const;
  /// Mean spheres of the points with f < 0.2 (disordered) and f > 0.8 (ordered), folded by the symmetry.
  std::optional<SphereMap> mean_disordered, mean_ordered;
  double ordered_area_fraction() const { return fraction.mean_raw(); }
  /// False when no point gave an ordered fraction; the statistics after the fraction stage (particles,
  /// intervals, sizes, mean spheres) are then not computed.
  bool measured_any() const { return fraction.measured() > 0; }
};

/// One sentence for a scan in which no point gave an ordered fraction, with the count of each reason
/// (unusable pattern, no orientation, no band contrast, grain too small).
std::string no_usable_point_sentence(const MapResults& r);

/// Plain-language warnings about results that rest on too little: most points without an ordered
/// fraction or without an orientation (the area fraction then comes from the few that are left),
/// the learned estimator's sub-resolution fraction (not measured), a footprint reaching more than one
/// step (the learned estimator takes other lattices out next to grain boundaries only), and a single phase reported by
/// the learned estimator where the map shows structure it could not place or from fewer than
/// kLearnedEstimatorMinPoints points (ordered_fraction.hpp). Empty when none applies.
std::vector<std::string> map_warnings(const MapResults& r);

/// Progress of a stage: (stage name, done, total).
using StageProgress = std::function<void(const std::string& stage, size_t done, size_t total)>;

/// The options with the scan description's own choices applied: its pattern-centre refinement,
/// and its [fraction] end members (regions, masks or the mixture) unless the options already ask
/// for the mixture.
MapOptions options_for_scan(const MapOptions& options, const ScanInputs& inputs);

/// Runs every stage on a scan, with options_for_scan(options, inputs). With a RowStore the
/// orientation and fraction stages resume. Shared among processes (`share`, every one calling it
/// with the same arguments; the store then a SharedRowStore of the same share), the detection
/// limit's simulations and the mean spheres' points are divided among them too; every process
/// returns the same results.
MapResults map_scan(const ScanInputs& inputs, const MapOptions& options, const StageProgress& progress = {},
                    RowStore* store = nullptr, const ProcessShare& share = {});

}  // namespace orderband
