// Precipitate statistics from a fraction map: segmentation, particles, size classes, confidence, unfolding.
#pragma once

#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#include "orderband/enum_names.hpp"
#include "orderband/scan_grid.hpp"

namespace orderband {

enum class ThresholdMethod { fixed, otsu };
template <>
struct EnumNames<ThresholdMethod> {
  static constexpr std::array<std::pair<ThresholdMethod, std::string_view>, 2> names{
      {{ThresholdMethod::fixed, "fixed"}, {ThresholdMethod::otsu, "otsu"}}};
};

struct SegmentSpec {
  ThresholdMethod method = ThresholdMethod::fixed;
  double threshold = 0.5;       ///< fixed threshold on f
  int square_connectivity = 8;  ///< 4 or 8 (hexagonal grids always use 6)
  int min_points = 1;           ///< smaller components are dropped (matrix); map sets it from the detection limit
  bool smooth = false;          ///< 3 × 3 (hexagonal: 7-point) mean of f before thresholding
  bool exclude_border = true;   ///< particles touching the map border stay out of size statistics
  /// Touching particles split apart: markers are the maxima of the map smoothed by a Gaussian of
  /// split_sigma_steps whose dynamic (height above the saddle to a higher maximum) reaches
  /// split_depth_sd × the smoothed noise (σ_f / (2 √π σ) for independent per-point noise σ_f =
  /// noise_sd), then the thresholded points are flooded from the markers. Off when noise_sd is 0.
  bool split_touching = true;
  double split_sigma_steps = 0.7;
  double split_depth_sd = 2.5;
  /// Then each part split by its outline (split_by_shape): a neck whose distance maximum's dynamic
  /// reaches this many steps separates two sections; infinity: off.
  double split_shape_depth_steps = 1.0;
  /// Then parts whose outline's aspect ratio reaches this are cut in two (split_elongated; sections
  /// of near-equiaxed particles are near-circular); infinity: off (plates, rafts, needles). Parts
  /// of an ECD above split_elongated_max_ecd_um (map: the largest class's lower bound) stay whole.
  double split_elongated_aspect = 1.7;
  double split_elongated_max_ecd_um = std::numeric_limits<double>::infinity();
  double noise_sd = 0;  ///< per-point noise of the map (map sets it from the detection limit)
};

struct Particle2D {
  int id = 0;  ///< 1…n in scan order of first points
  int points = 0;
  double area_um2 = 0, ecd_um = 0;
  double centroid_x_um = 0, centroid_y_um = 0;
  /// Second central moments of the point centres (µm²): x along columns, y along rows.
  double mxx_um2 = 0, myy_um2 = 0, mxy_um2 = 0;
  double aspect_ratio = 1;    ///< sqrt(λ_max/λ_min) of the second-moment tensor (cells of one step)
  double major_axis_deg = 0;  ///< angle of the major axis from x_S toward y_S (image: down), in (−90, 90]
  double mean_fraction = 0;
  int host_grain = 0;              ///< the grain most of its points belong to (0: unknown)
  bool on_grain_boundary = false;  ///< its neighbours outside it belong to two or more grains
  bool own_orientation = false;    ///< it holds at least half of its host grain's points: a grain of its own
  bool touches_border = false;
  /// The section's diameter corrected for how the map shows sections (the detection limit's
  /// transfer: beam blur, threshold, noise); the ECD until map corrects it. Sizes are from it.
  double section_diameter_um = 0;
  /// The diameter that decides the size class: the ECD, or for a particle cut by the map border
  /// the larger of its ECD and the diameter of the circle fitted to its free boundary (the cut
  /// section's ECD understates the particle: a half disc's is 0.71 of the disc's).
  double class_diameter_um = 0;
  std::string size_class;
};

struct Segmentation {
  double threshold = 0.5;      ///< the threshold used (fixed or Otsu)
  std::vector<int32_t> label;  ///< per point: particle id, 0 matrix, −1 unusable
  std::vector<Particle2D> particles;
  size_t usable_points = 0;
};

/// Thresholds and labels the map; unusable points (NaN) are neither particle nor matrix.
/// `grain` (optional, may be empty) gives each point's grain for host and boundary flags.
Segmentation segment_particles(const ScanGrid& grid, const std::vector<float>& fraction,
                               const std::vector<int32_t>& grain, const SegmentSpec& spec = {});

/// Otsu's threshold (Otsu, IEEE Trans. SMC 9 (1979) 62) of the finite values in [0, 1], 256 bins.
double otsu_threshold(const std::vector<float>& values);

/// Size classes. Names and lower bounds in µm, ascending (defaults, common practice for
/// nickel-base superalloys: tertiary below 0.1 µm, secondary 0.1–1 µm, primary from 1 µm). A
/// section's class comes from its origin and the resolution, not from its size alone, because a
/// plane cuts a particle anywhere:
///  - below the detection limit: "unresolved", no class (its ordered area counts with the last-but-two
///    class, tertiary, which is reported by area only);
///  - the last class (primary): a grain of its own (own orientation), or on a grain boundary with a
///    diameter of at least boundary_share × the last bound, or a diameter above the last bound;
///  - every other resolved section: the class below it (secondary), whatever its size; the 3-D
///    sizes of that population come from the truncated-section fit (stereology.hpp). Resolved
///    tertiary particles (on maps with steps far below 0.1 µm) would be counted with it.
struct SizeClasses {
  std::vector<std::string> names{"tertiary", "secondary", "primary"};
  std::vector<double> lower_um{0.0, 0.1, 1.0};
  double detection_limit_um = 0;  ///< set by map from the detection limit
  double boundary_share = 0.5;
  std::string classify(const Particle2D& p) const;
  /// By diameter alone (the bounds as given).
  std::string classify(double ecd_um) const;
};
inline constexpr const char* kUnresolvedClass = "unresolved";
/// A class with fewer counted particles is flagged as too few for statistics (report, ranking).
inline constexpr int kFewParticles = 10;

struct ClassStats {
  std::string name;
  double lower_um = 0, upper_um = 0;  ///< upper: infinity for the last class
  int count = 0;                      ///< particles in the statistics (not touching the border)
  bool counted = true;                ///< false: reported by area only (ordering below the detection limit)
  double area_fraction = 0;           ///< all particles of the class (border ones included) / analysed area
  double number_density_per_um2 = 0;  ///< counted particles / analysed area (guard-frame counting)
  double mean_ecd_um = 0, median_ecd_um = 0;
  double lognormal_mu = 0, lognormal_sigma = 0;  ///< maximum-likelihood fit of ln ECD
};

std::vector<ClassStats> class_statistics(const ScanGrid& grid, Segmentation& seg, const SizeClasses& classes);

/// Confidence interval of the ordered area fraction.
struct FractionCI {
  std::string method;
  double mean = 0, low = 0, high = 0, half_width = 0;
  int fields = 0;
};

/// ASTM E562 (systematic manual point count, 2019): the map cut into tiles as fields, P_P(i)
/// the mean fraction of field i, s their standard deviation, 95 % CI = t_{0.975, n−1} · s / √n.
FractionCI astm_e562_ci(const ScanGrid& grid, const std::vector<float>& fraction, int tiles_per_side = 4);
/// From field values directly (for the worked example).
FractionCI astm_e562_ci(const std::vector<double>& field_values);
/// Moving-block bootstrap: blocks of `block` × `block` points drawn with replacement over the
/// map (keeps the spatial correlation inside blocks), `resamples` means, percentile interval.
FractionCI block_bootstrap_ci(const ScanGrid& grid, const std::vector<float>& fraction, int block = 8,
                              int resamples = 1000, uint64_t seed = 1);

/// Schwartz–Saltykov unfolding (Saltykov, Stereometric Metallography, 1958; Underwood,
/// Quantitative Stereology, 1970) of section diameters into sphere diameters in `classes`
/// classes of equal width Δ = max/classes: N_A(i) = Σ_{j≥i} N_V(j) D_j P(i, j), with
/// P(i, j) = [√(j² − (i−1)²) − √(j² − i²)] / j, solved from the largest class down.
/// Counts are per unit volume if section counts are per unit area. Negative counts are kept:
/// the method assumes spheres and is ill-conditioned for few particles (Russ & DeHoff,
/// Practical Stereology, ch. 12).
struct Unfolding {
  double class_width_um = 0;
  std::vector<double> diameter_um;    ///< class upper bounds D_j = jΔ
  std::vector<double> section_count;  ///< N_A per class (input histogram)
  std::vector<double> sphere_count;   ///< N_V per class (may be negative)
  int negative_classes = 0;
  double mean_diameter_um = 0;  ///< Σ N_V D_mid / Σ N_V over positive classes
};
Unfolding saltykov_unfold(const std::vector<double>& section_diameters_um, int classes, double area_um2 = 1.0);

}  // namespace orderband
