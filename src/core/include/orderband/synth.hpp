// Synthetic scans: scenario, per-point phase mixtures, kinematic pattern rendering and truth.
#pragma once

#include <cmath>
#include <cstdint>
#include <functional>
#include <map>
#include <memory>
#include <mutex>
#include <string>
#include <vector>

#include "orderband/band_model.hpp"
#include "orderband/bloch_waves.hpp"
#include "orderband/detector_geometry.hpp"
#include "orderband/microstructure.hpp"
#include "orderband/ordering_pair.hpp"
#include "orderband/scan_config.hpp"
#include "orderband/sphere.hpp"

namespace orderband {

/// Background shapes of the renderer (the smooth detector background the bands sit on).
enum class BackgroundShape {
  quadratic,  ///< brightest a little above the pattern centre, 1 − falloff · r² (r = 1 at the far corner)
  gaussian,  ///< 1 − falloff · (1 − exp(−r²/(2 · 0.35²))) / (1 − exp(−1/(2 · 0.35²))): a flatter top, steeper sides
  linear,  ///< a tilted plane: 1 − falloff · (0.8 · y + 0.2 · x), x, y from 0 to 1 across the screen
};

/// Renderer variants of the model-mismatch suite: how the synthetic patterns differ from the
/// estimator's band model. The fraction stage is never told any of these; scans made with them
/// test that its accuracy does not rest on the model's intensities.
struct RendererVariant {
  BackgroundShape background = BackgroundShape::quadratic;
  double detector_gamma = 1;          ///< detector response: counts ∝ (B · I)^gamma
  double family_contrast_spread = 0;  ///< each family's weight × (1 + spread · U(−1, 1)), the same in both phases
  std::uint64_t family_contrast_seed = 1;
  double ordered_fundamental_ratio = 1;  ///< the ordered phase's fundamental band weights relative to the disordered's
  /// Edge contrast of the ordered phase's fundamental bands (NaN: the band model's): an
  /// ordering-dependent change of fundamental-band profiles, as dynamical patterns show.
  double ordered_fundamental_edge_contrast = std::nan("");
  double lattice_misfit = 0;   ///< relative change of the ordered phase's lattice parameters
  double beam_elongation = 1;  ///< beam footprint σ along y_S over σ along x_S (1/cos tilt ≈ 2.9 at 70°)
  Eigen::Vector3d pc_error_px = Eigen::Vector3d::Zero();  ///< rendering PC x, y and distance minus the recorded ones
};

/// Where a synthetic scan's phase intensities come from.
enum class PatternModelKind {
  kinematic,  ///< the kinematic band model (band_model.hpp)
  many_beam,  ///< each phase's dynamical sphere (dynamical_sphere.hpp), interpolated on HEALPix
};

/// The many-beam renderer's settings: the spheres' parameters (the scenario's voltage is used) and
/// how strongly their relative modulation shows on the background.
struct ManyBeamSpec {
  /// Pattern = background · Σ_c w_c (1 + contrast · (I_c / ⟨I_c⟩ − 1)), ⟨I_c⟩ the phase sphere's
  /// mean: each phase's sphere normalised to its own mean (equal backscatter yields; the atomic-
  /// number contrast between the phases is left out). 0.3 gives an rms modulation of about 11 %
  /// for Ni at 20 kV, within the few-to-ten per cent band contrast of real patterns (memory).
  double contrast = 0.3;
  int nside = 128;
  BeamSetSpec beams = kSphereBeams;
  double proportional_absorption = 0.1;
  double mean_depth_nm = 10;
  std::string cache_folder;  ///< where the spheres are cached (empty: not cached)
};

/// Everything a synthetic scan is made from (read from a scenario TOML file).
struct SynthScenario {
  std::string path;  ///< scenario file (absolute), empty when built in code
  std::string name;
  std::string description;
  std::uint64_t seed = 1;
  ScanGrid grid;
  DetectorGeometrySpec geometry;  ///< stored-pattern pixels (after binning)
  double kv = 20;
  PhaseSelection phases;
  SampleType sample_type = SampleType::uint16;  ///< uint8 or uint16
  double counts_per_px = 5000;                  ///< mean expected counts per stored pixel
  BandModelParams band;
  double beam_sigma_nm = 10;        ///< Gaussian beam-interaction blur in the scan plane; 0: none
  double background_falloff = 0.5;  ///< background: 1 − falloff at the far corners relative to the bright centre
  bool pc_drift = false;            ///< render with the PC drifting across the scan (needs screen_pixel_um)
  RendererVariant variant;
  PatternModelKind pattern_model = PatternModelKind::kinematic;
  ManyBeamSpec many_beam;
  MicrostructureSpec micro;
  bool scan_uses_truth_orientations = false;  ///< the written scan.toml reads truth_orientations.csv
};

/// One phase component of a point's pattern: a lattice orientation, ordered
/// or not, with its share of the diffracting volume.
struct MixtureComponent {
  Rotation orientation;
  bool ordered = false;
  double weight = 0;
  int key = 0;  ///< grain index, or −(particle index + 1) for a particle's own orientation
};

/// Phase mixture at a scan point: the Gaussian beam blur sampled on a 5 × 5
/// grid of offsets spaced σ apart (weights exp(−r²/2σ²)), each offset taking
/// the microstructure there (matrix: 1 − f_t disordered + f_t ordered with the
/// host grain's orientation; particle: ordered with its own orientation).
/// With two σ the footprint is elliptical: σ_x along the scan columns (the tilt axis), σ_y along the rows.
std::vector<MixtureComponent> point_mixture(const Microstructure& m, const Eigen::Vector2d& p_um,
                                            double beam_sigma_x_um, double beam_sigma_y_um);
inline std::vector<MixtureComponent> point_mixture(const Microstructure& m, const Eigen::Vector2d& p_um,
                                                   double beam_sigma_um) {
  return point_mixture(m, p_um, beam_sigma_um, beam_sigma_um);
}

/// Renders patterns from the kinematic band model (see band_model.hpp), or from the phases'
/// dynamical spheres (use_spheres): expected counts = counts_per_px · B(pixel) · Σ_c w_c I_c(g_c v),
/// with B a smooth background of mean 1 over the screen, then Poisson noise. Binned stored pixels
/// average binning² sub-pixel directions.
class PatternRenderer {
 public:
  PatternRenderer(const DetectorGeometry& geometry, const KinematicBandModel& ordered,
                  const KinematicBandModel& disordered, double counts_per_px, double background_falloff,
                  BackgroundShape background_shape = BackgroundShape::quadratic, double detector_gamma = 1);
  /// Expected counts (no noise) for a mixture, with the geometry given (PC drift).
  void expected(const std::vector<MixtureComponent>& mix, const DetectorGeometry& geometry, float* out) const;
  /// Expected counts then Poisson noise from `seed`, clipped to the sample type's range.
  void render(const std::vector<MixtureComponent>& mix, const DetectorGeometry& geometry, std::uint64_t seed,
              SampleType type, double scale_8bit, std::uint16_t* out) const;
  const std::vector<float>& background() const { return background_; }
  /// Takes the phases' intensities from their spheres instead of the band models (ManyBeamSpec).
  void use_spheres(const PhaseSpheres& spheres, double contrast);

 private:
  /// Sub-pixel directions in the sample frame, one array per axis (so that dot products vectorise).
  struct Directions {
    std::vector<float> x, y, z;
  };
  /// Adds each component's band or sphere modulation, times its weight, per sub-pixel.
  void add_band_model(const std::vector<MixtureComponent>& mix, const Directions& d, std::vector<double>& acc) const;
  void add_spheres(const std::vector<MixtureComponent>& mix, const Directions& d, const DetectorGeometry& geometry,
                   std::vector<double>& acc) const;

  const KinematicBandModel& ordered_;
  const KinematicBandModel& disordered_;
  double counts_, gamma_ = 1;
  int width_, height_, sub_;
  std::vector<float> background_;  ///< mean 1 over the stored pattern
  PhaseSpheres spheres_;
  double sphere_contrast_ = 0, sphere_mean_[2] = {1, 1};  ///< [ordered]: the spheres' means
  /// The sphere modulation per sub-pixel of each (component key, ordered) seen before: points of
  /// one grain share its orientation, so the interpolation is done once per grain and phase
  /// (checked against the orientation and pattern centre; a drifting centre is not cached).
  struct SphereModulation {
    Eigen::Vector4d quaternion;
    Eigen::Vector3d pattern_centre;
    std::vector<double> value;
  };
  struct ModulationCache {
    std::mutex mutex;
    std::map<std::pair<int, bool>, std::shared_ptr<const SphereModulation>> entries;
  };
  std::shared_ptr<ModulationCache> modulation_cache_ = std::make_shared<ModulationCache>();
  std::shared_ptr<const SphereModulation> sphere_modulation(const MixtureComponent& c, const Directions& d,
                                                            const DetectorGeometry& geometry) const;
};

/// Truth of a synthetic scan.
struct SynthTruth {
  std::vector<float> ordered_fraction;  ///< per point: beam-weighted ordered fraction
  std::vector<int32_t> grain;  ///< per point: whose lattice the centre carries (grain, coherent particle's host grain,
                               ///< or grain count + particle id for a particle with its own orientation)
  std::vector<int32_t> particle;      ///< per point: particle id at the centre, 0 for matrix
  std::vector<Rotation> orientation;  ///< per point: lattice orientation at the centre
  std::vector<uint8_t> ordered_at_centre;
  double ordered_area_fraction = 0;  ///< primary + secondary + tertiary, fine raster
  double primary_area_fraction = 0, secondary_area_fraction = 0, tertiary_area_fraction = 0;
  int primary_count = 0, secondary_count = 0;                 ///< particles whose section centre lies in the field
  double primary_mean_ecd_um = 0, secondary_mean_ecd_um = 0;  ///< section ECDs of those
};

/// Truth maps and statistics (fine raster: 4 × 4 samples per point).
SynthTruth compute_truth(const Microstructure& m, const ScanGrid& grid, double beam_sigma_x_um, double beam_sigma_y_um);
inline SynthTruth compute_truth(const Microstructure& m, const ScanGrid& grid, double beam_sigma_um) {
  return compute_truth(m, grid, beam_sigma_um, beam_sigma_um);
}

/// Band models of both phases as a scenario renders them: the scenario's band parameters with
/// every renderer variant applied (misfit, per-family contrasts, ordered fundamental bands).
struct RenderModels {
  KinematicBandModel ordered, disordered;
};
RenderModels render_models(const SynthScenario& scenario, const OrderingPair& pair);

/// The geometry the patterns are rendered with (the recorded one plus the variant's PC error).
DetectorGeometrySpec render_geometry(const SynthScenario& scenario);

/// A scenario's scan, rendered row by row: the microstructure, the models and the renderer,
/// built once. Each point draws from its own random stream (seeded by the scenario's seed and
/// the point's index), so a row is the same whatever the thread count.
class SyntheticScan {
 public:
  /// `spheres` (both phases) for a many-beam scenario; ignored for a kinematic one.
  SyntheticScan(const SynthScenario& scenario, const OrderingPair& pair, const PhaseSpheres& spheres = {});
  /// Renders the patterns of one scan row into out (cols · pixels samples, uint8 values kept in
  /// the 16-bit samples when the scenario stores uint8); points in parallel.
  void render_row(int row, std::uint16_t* out) const;
  const DetectorGeometry& geometry() const { return geometry_; }
  const Microstructure& microstructure() const { return micro_; }
  size_t pixels() const { return static_cast<size_t>(geometry_.width()) * geometry_.height(); }
  /// The truth maps and statistics under the scenario's beam footprint.
  SynthTruth truth() const;

 private:
  const SynthScenario& scenario_;
  RenderModels models_;
  Microstructure micro_;
  DetectorGeometry geometry_;
  PatternRenderer renderer_;
  double beam_x_um_, beam_y_um_, scale_8bit_;
};

}  // namespace orderband
