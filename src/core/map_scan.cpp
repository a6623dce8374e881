// The per-scan analysis chain.
#include "orderband/map_scan.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>

#include "orderband/laue_group.hpp"
#include "orderband/units.hpp"

namespace orderband {
namespace {

/// "1 row", "3 rows".
std::string counted(int n, const std::string& noun) { return std::to_string(n) + " " + noun + (n == 1 ? "" : "s"); }

/// The segmentation as given, with the elongation split kept to sections below the largest class.
SegmentSpec map_segment_spec(const MapOptions& options) {
  SegmentSpec segment = options.segment;
  if (!options.classes.lower_um.empty())
    segment.split_elongated_max_ecd_um = std::min(segment.split_elongated_max_ecd_um, options.classes.lower_um.back());
  return segment;
}

/// The detection limit of the fraction map: its per-point noise is the median standard error of
/// the points, its matrix level the sub-resolution fraction (the matrix's mean).
DetectionLimit map_detection_limit(const ScanConfig& config, const FractionResults& fraction, const MapOptions& options,
                                   const ProcessShare& share) {
  std::vector<float> se;
  for (float u : fraction.uncertainty)
    if (std::isfinite(u)) se.push_back(u);
  const double noise = se.empty() ? 0.0
                                  : (std::nth_element(se.begin(), se.begin() + se.size() / 2, se.end()),
                                     static_cast<double>(se[se.size() / 2]));
  DetectionLimitSpec spec = options.detection;
  spec.share = share;
  spec.segment = map_segment_spec(options);
  spec.segment.method = ThresholdMethod::fixed;
  spec.segment.threshold =
      options.segment.method == ThresholdMethod::otsu ? otsu_threshold(fraction.fraction) : options.segment.threshold;
  const double level = std::isfinite(fraction.subresolution_fraction)
                           ? std::clamp(fraction.subresolution_fraction, 0.0, 0.9 * spec.segment.threshold)
                           : 0.0;
  return detection_limit(config.grid, beam_footprint(config), level, noise, spec);
}

/// The secondary class's sections (not cut by the map border) unfolded into sphere sizes: the
/// truncated maximum-likelihood fits and Schwartz–Saltykov as a non-parametric check.
void fit_secondary_sizes(const ScanGrid& grid, const SizeClasses& classes, int unfold_classes, MapResults& r) {
  if (classes.names.size() < 2) return;
  const std::string& secondary = classes.names[classes.names.size() - 2];
  SectionSample sample{{},
                       r.detection.diameter_um,
                       r.segmentation.usable_points * grid.step_um * grid.row_spacing_um(),
                       grid.step_um / std::sqrt(12.0)};
  for (const Particle2D& p : r.segmentation.particles)
    if (p.size_class == secondary && !p.touches_border) sample.diameter_um.push_back(p.section_diameter_um);
  if (!(sample.area_um2 > 0)) return;
  r.secondary_lognormal = fit_sphere_sizes(sample, SphereSizeModel::lognormal);
  r.secondary_lsw = fit_sphere_sizes(sample, SphereSizeModel::lsw);
  if (sample.diameter_um.size() >= 5) r.unfolding = saltykov_unfold(sample.diameter_um, unfold_classes, 1.0);
}

}  // namespace

std::string no_usable_point_sentence(const MapResults& r) {
  const std::vector<uint8_t>& reason = r.fraction.reason;
  auto count = [&](FractionReason why) { return std::count(reason.begin(), reason.end(), static_cast<uint8_t>(why)); };
  return "no point of the scan gave an ordered fraction (" + std::to_string(reason.size()) +
         " points: " + std::to_string(count(FractionReason::unusable_pattern)) + " unusable patterns, " +
         std::to_string(count(FractionReason::no_orientation)) + " without an orientation, " +
         std::to_string(count(FractionReason::no_band_contrast)) + " without band contrast, " +
         std::to_string(count(FractionReason::small_grain)) +
         " in grains too small to place), so nothing could be measured";
}

std::vector<std::string> map_warnings(const MapResults& r) {
  std::vector<std::string> w = r.input_warnings;
  const size_t n = r.fraction.reason.size(), measured = r.fraction.measured();
  const size_t no_orientation = r.orientations.orientation.size() - r.orientations.with_orientation();
  auto percent = [&](size_t k) {
    return std::to_string(static_cast<int>(std::lround(100.0 * k / std::max<size_t>(n, 1))));
  };
  if (n > 0 && 5 * no_orientation > n)
    w.push_back(percent(no_orientation) + " % of the points have no orientation (" + std::to_string(no_orientation) +
                " of " + std::to_string(n) +
                "): check the patterns (hot pixels, the detector mask, the pattern centre) before trusting the maps");
  if (n > 0 && 2 * measured < n)
    w.push_back("the ordered fraction rests on " + std::to_string(measured) + " of " + std::to_string(n) + " points (" +
                percent(measured) + " %); the area fraction and the statistics describe those points only");
  if (const auto& faults = r.orientations.pattern_faults; !faults.empty())
    w.push_back(std::to_string(faults.size()) + " pattern" + (faults.size() == 1 ? "" : "s") +
                " could not be used as stored and count as unusable points (first: " + faults.begin()->second +
                "); they are listed in summary.json");
  if (r.fraction.estimator_choice == EstimatorChoice::mixture_end_members)
    w.push_back(
        "mixture end members rescale the model-led estimates, so the model-led estimator ran although the scan has "
        "enough points for the learned one (which sets its end members from the scan itself): drop --end-members "
        "mixture to use it");
  else if (r.fraction.estimator_choice == EstimatorChoice::too_few_points)
    w.push_back("the scan has " + std::to_string(n) + " points, fewer than the " +
                std::to_string(kLearnedEstimatorMinPoints) +
                " from which the response to ordering is learned from the data: the model-led estimator ran, whose "
                "absolute fraction holds only where the kinematic model's band intensities are right (systematic "
                "uncertainty in summary.json); map a larger field or set reference regions in [fraction]");
  if (r.fraction.zero_is_matrix)
    w.push_back(
        "the learned estimator takes each grain's matrix as its zero: sub-resolution (tertiary) ordering is "
        "counted as matrix, not measured (reference regions in [fraction] set the zero from an area known to be "
        "free of ordering)");
  if (r.fraction.estimator == "learned" && r.fraction.two_phases &&
      std::max(r.fraction.beam_reach.rows, r.fraction.beam_reach.cols) > 1)
    w.push_back("the beam's footprint reaches " + counted(r.fraction.beam_reach.rows, "row") + " and " +
                counted(r.fraction.beam_reach.cols, "column") +
                " from each point: a point that far from a grain boundary sees the other grain's lattice as well; "
                "it is taken out, but on synthetic scans with a footprint 2.9 × longer along the tilt the points "
                "near grain boundaries still read about 0.1 high and the area fraction +0.02 to +0.07, and points "
                "at the field's edge see material outside the map, which nothing can take out (single points there "
                "read far above 1 and can set the scale wrong); check the fraction map along grain boundaries and "
                "the field's edges before trusting particles there");
  if (r.fraction.estimator == "learned" && !r.fraction.two_phases) {
    char z[32];
    std::snprintf(z, sizeof z, "%.1f", r.fraction.learned_spatial_z);
    if (r.fraction.learned_spatial_z >= LearnedSpec{}.min_spatial_z)
      w.push_back(std::string("the learned estimator reports one phase, but the map shows spatial structure (z = ") +
                  z +
                  ") that it could not place: the single-phase result is doubtful; compare with --estimator "
                  "model or set reference regions in [fraction]");
    else if (measured < kLearnedEstimatorMinPoints)
      w.push_back("the learned estimator reports one phase from " + std::to_string(measured) + " points: below about " +
                  std::to_string(kLearnedEstimatorMinPoints) +
                  " it can miss a second phase of a quarter of the area (measured on 48 × 48 px patterns); compare "
                  "with --estimator model or map a larger field");
    else
      w.push_back(
          std::string("the learned estimator found one phase and names it ") +
          (r.fraction.single_phase_ordered ? "ordered" : "disordered") +
          " from the kinematic model's band intensities scaled to the data, with no second phase to compare "
          "with: on synthetic single-phase scans that name was right on 4 of 8 kinematic renderers (wrong with "
          "dark edge lines, flat or Gaussian bands, and a misfit of double amplitude) and on many-beam patterns "
          "from converged spheres, wrong for pure γ′ from a small beam set; confirm it with a reference region "
          "in [fraction] or an independent measurement");
  }
  return w;
}

const SphereSizeFit* MapResults::secondary_preferred() const {
  const SphereSizeFit *a = &secondary_lognormal, *b = &secondary_lsw;
  if (!a->determined) return b->determined ? b : nullptr;
  if (!b->determined) return a;
  return b->aic() < a->aic() ? b : a;
}

MapOptions options_for_scan(const MapOptions& options, const ScanInputs& inputs) {
  MapOptions applied = options;
  const ScanConfig& config = inputs.config;
  FractionSpec& f = applied.fraction;
  f.refine_pattern_centre = config.refine_pattern_centre;
  if (f.end_members != EndMemberMode::model || config.end_members.mode == "model") return applied;
  f.end_members = enum_from_name<EndMemberMode>(config.end_members.mode).value_or(EndMemberMode::regions);
  auto rects = [](const std::vector<std::array<int, 4>>& in) {
    std::vector<PointRect> out;
    for (const auto& v : in) out.push_back({v[0], v[1], v[2], v[3]});
    return out;
  };
  f.ordered_regions = rects(config.end_members.ordered_regions);
  f.disordered_regions = rects(config.end_members.disordered_regions);
  f.ordered_mask = inputs.ordered_mask;
  f.disordered_mask = inputs.disordered_mask;
  return applied;
}

namespace {

/// The points each mean sphere is made of: up to `at_most` of the clearly disordered (f < 0.2) and
/// of the clearly ordered (f > 0.8) points with an orientation, each class evenly spread over the
/// scan; all of them in scan order.
std::vector<size_t> mean_sphere_points(const MapResults& r, size_t at_most) {
  std::vector<size_t> cls[2];
  for (size_t k = 0; k < r.fraction.fraction.size(); ++k) {
    const float f = r.fraction.fraction[k];
    if (r.orientations.orientation[k] && std::isfinite(f) && (f < 0.2 || f > 0.8)) cls[f > 0.8].push_back(k);
  }
  std::vector<size_t> chosen = spread_sample(cls[0], at_most);
  const std::vector<size_t> ordered = spread_sample(cls[1], at_most);
  chosen.insert(chosen.end(), ordered.begin(), ordered.end());
  std::sort(chosen.begin(), chosen.end());
  return chosen;
}

/// Both spheres' sums and weights added over the processes, in process order.
void add_over_processes(const ProcessShare& share, SphereMap& dis, SphereMap& ord) {
  std::vector<double> mine;
  for (const SphereMap* m : {&dis, &ord})
    mine.insert(mine.end(), m->sum.begin(), m->sum.end()), mine.insert(mine.end(), m->weight.begin(), m->weight.end());
  const std::vector<std::vector<double>> all = share.all_gather_numbers(mine);
  for (SphereMap* m : {&dis, &ord})
    std::fill(m->sum.begin(), m->sum.end(), 0.0), std::fill(m->weight.begin(), m->weight.end(), 0.0);
  for (const std::vector<double>& part : all) {
    if (part.size() != mine.size()) fail("a process sent mean spheres of another size");
    size_t at = 0;
    for (SphereMap* m : {&dis, &ord}) {
      for (double& v : m->sum) v += part[at++];
      for (double& v : m->weight) v += part[at++];
    }
  }
}

/// The mean spheres of the clearly disordered and clearly ordered points (mean_sphere_points),
/// each pattern back-projected at its own orientation and folded by the parent's Laue group. The
/// sphere pixels of a batch are found in parallel; the sums are added in point order, so the
/// spheres do not depend on the number of threads. Shared among processes, each takes one block
/// of the points and the blocks' sums are added in process order (the same on every process; the
/// sums differ from one process's in the last bits).
void accumulate_mean_spheres(const ScanInputs& inputs, const OrderingPair& pair, size_t at_most,
                             const StageProgress& progress, const ProcessShare& share, MapResults& r) {
  PatternSource* source = inputs.patterns.get();
  const DetectorGeometry geometry(inputs.geometry());
  const DetectorRays rays(geometry);
  const Preprocessor& pre = inputs.preprocessor();
  const SphereGrid sphere_grid(SphereGrid::nside_for(0.5 * geometry.angular_pixel_size_rad()));
  SphereMap dis(sphere_grid), ord(sphere_grid);
  const std::vector<size_t> all_points = mean_sphere_points(r, at_most);
  const auto [first, last] = share.block_of(all_points.size());
  const std::vector<size_t> points(all_points.begin() + static_cast<std::ptrdiff_t>(first),
                                   all_points.begin() + static_cast<std::ptrdiff_t>(last));
  PreprocessedPoints reader(*source, inputs.config.grid, pre);
  constexpr size_t kBatch = 64;
  const size_t px = source->pixels();
  std::vector<long> sphere_pixel(kBatch * px);
  size_t done = 0;
  reader.load_in_batches(
      points, kBatch,
      [&](const std::vector<size_t>& batch, const std::vector<float>& patterns, const std::vector<uint8_t>& usable) {
#pragma omp parallel for schedule(dynamic)
        for (size_t i = 0; i < batch.size(); ++i)
          if (usable[i])
            sphere_pixels(pre.mask(), rays, *r.orientations.orientation[batch[i]], sphere_grid,
                          sphere_pixel.data() + i * px);
        for (size_t i = 0; i < batch.size(); ++i)
          if (usable[i])
            back_project(patterns.data() + i * px, pre.mask(), rays, sphere_pixel.data() + i * px,
                         r.fraction.fraction[batch[i]] > 0.8 ? ord : dis);
        done += batch.size();
        if (progress) progress("mean spheres", done, points.size());
      });
  if (share.shared()) add_over_processes(share, dis, ord);
  const CrystalSymmetry symmetry(laue_rotations(pair.disordered));
  r.mean_disordered.emplace(fold_by_symmetry(dis, symmetry));
  r.mean_ordered.emplace(fold_by_symmetry(ord, symmetry));
}

}  // namespace

MapResults map_scan(const ScanInputs& inputs, const MapOptions& requested, const StageProgress& progress,
                    RowStore* store, const ProcessShare& share) {
  MapResults r;
  r.options = options_for_scan(requested, inputs);
  r.input_file_hashes = inputs.file_hashes;
  const MapOptions& options = r.options;
  const ScanConfig& config = inputs.config;
  const OrderingPair& pair = inputs.phases;
  r.ordered_phase = pair.ordered.name;
  r.disordered_phase = pair.disordered.name;
  auto stage = [&](const std::string& name) {
    return [&, name](size_t d, size_t t) {
      if (progress) progress(name, d, t);
    };
  };
  r.pattern_sample = sample_patterns(*inputs.patterns, kPatternSamplePoints, config.preprocess.hot_pixel_threshold);
  require_declared_width(r.pattern_sample, inputs.patterns->describe());
  if (auto w = hot_pixel_warning(r.pattern_sample, config.preprocess)) r.input_warnings.push_back(*w);
  r.orientations = orient_scan(inputs, options.orient, stage("orientations"), store);
  r.fraction = ordered_fraction_scan(inputs, r.orientations, options.fraction, stage("ordered fraction"), store);
  if (!r.measured_any()) return r;

  const ScanGrid& grid = config.grid;
  r.detection = map_detection_limit(config, r.fraction, options, share);
  SegmentSpec segment = map_segment_spec(options);
  if (segment.min_points <= 0) segment.min_points = r.detection.min_points;
  segment.noise_sd = r.detection.noise_sd;
  SizeClasses classes = options.classes;
  classes.detection_limit_um = r.detection.diameter_um;
  // The unclipped estimates: clipping at 0 and 1 flattens the noise the split relies on (the
  // threshold picks the same points either way).
  r.segmentation = segment_particles(grid, r.fraction.raw, r.orientations.grains.id, segment);
  correct_section_diameters(r.detection.transfer, r.segmentation);
  r.classes = class_statistics(grid, r.segmentation, classes);
  r.e562 = astm_e562_ci(grid, r.fraction.raw, options.e562_tiles);
  r.bootstrap = block_bootstrap_ci(grid, r.fraction.raw, options.bootstrap_block, options.bootstrap_resamples, 1);
  fit_secondary_sizes(grid, classes, options.unfold_classes, r);

  if (options.mean_spheres) accumulate_mean_spheres(inputs, pair, options.mean_sphere_points, progress, share, r);
  return r;
}

}  // namespace orderband
