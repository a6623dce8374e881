// Scan validation and run summary.
#include "orderband/scan_check.hpp"

#include <chrono>
#include <cmath>

#include "fraction_context.hpp"
#include "orderband/error.hpp"
#include "orderband/pattern_sample.hpp"
#include "orderband/units.hpp"

namespace orderband {

ScanCheck check_scan(const ScanInputs& inputs, size_t sample_points, double d_min_A) {
  const ScanConfig& config = inputs.config;
  ScanCheck c;
  c.config = config;
  PatternSource* source = inputs.patterns.get();
  c.source_description = source->describe();
  c.width_px = source->width();
  c.height_px = source->height();
  c.config.geometry.width_px = c.width_px;
  c.config.geometry.height_px = c.height_px;
  c.config.patterns.width_px = c.width_px;
  c.config.patterns.height_px = c.height_px;
  const DetectorGeometry geometry(c.config.geometry);
  c.field_width_um = config.grid.field_width_um();
  c.field_height_um = config.grid.field_height_um();
  c.angular_width_deg = rad_to_deg(geometry.angular_width_rad());
  c.angular_height_deg = rad_to_deg(geometry.angular_height_rad());
  c.angular_pixel_deg = rad_to_deg(geometry.angular_pixel_size_rad());
  c.max_angle_from_pc_deg = rad_to_deg(geometry.max_angle_from_pc_rad());
  c.pc_direction_sample = geometry.direction_sample({config.geometry.pc_px.x(), config.geometry.pc_px.y()}).vec();

  const OrderingPair& pair = inputs.phases;
  c.pair_name = pair.name;
  choose_fraction_families(pair, config.kv, FractionSpec{});  // fails as map would (no superlattice family)
  for (const PairFamily& f : pair_family_table(pair, config.kv, d_min_A)) {
    FamilyVisibility v{f, 2 * f.bragg_ordered_rad / geometry.angular_pixel_size_rad()};
    if (f.sensitivity >= 0.5 && v.band_width_px < 2)
      c.warnings.push_back("superlattice family " + f.family.label() + " is only " +
                           std::to_string(v.band_width_px).substr(0, 4) +
                           " px wide on this detector: finer patterns or a longer distance would resolve it");
    c.families.push_back(std::move(v));
  }

  // The raw patterns: the stored width and hot pixels, as map checks them.
  c.sample = sample_patterns(*source, sample_points, config.preprocess.hot_pixel_threshold);
  require_declared_width(c.sample, c.source_description);
  if (auto w = hot_pixel_warning(c.sample, config.preprocess)) c.warnings.push_back(*w);

  // Preprocess a sample of points spread over the scan, timed on one thread.
  PreprocessSpec spec = config.preprocess;
  if (spec.static_background == StaticBackgroundKind::scan_mean) spec.static_background = StaticBackgroundKind::none;
  // (A static background file is read and checked here; the scan mean is not computed.)
  const Preprocessor pre = inputs.preprocessor(spec);
  const size_t n = std::min(sample_points, source->count());
  std::vector<float> buffer(source->pixels());
  const auto t0 = std::chrono::steady_clock::now();
  for (size_t k = 0; k < n; ++k) {
    const size_t index = n > 1 ? k * (source->count() - 1) / (n - 1) : 0;
    source->read(index, 1, buffer.data());
    c.sampled_unusable += !pre.apply(buffer.data());
  }
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  c.sampled_points = n;
  c.preprocess_seconds_per_point = n ? seconds / n : 0;
  // The scan mean reads its sample once more (reading is about 0.3 of preprocessing a pattern).
  const size_t total = source->count(), mean_points = config.preprocess.scan_mean_points;
  const double mean_share = config.preprocess.static_background != StaticBackgroundKind::scan_mean ? 0.0
                            : mean_points == 0                                                     ? 1.0
                                               : std::min(1.0, double(mean_points) / total);
  c.estimated_preprocess_seconds = c.preprocess_seconds_per_point * total * (1.0 + 0.3 * mean_share);
  // Three rows of float patterns, one output row, one read chunk, plus a few float maps per point.
  const double row_mb = double(config.grid.cols) * source->pixels() * 4 / 1e6;
  c.estimated_memory_mb = 5 * row_mb + double(config.grid.count()) * 16 * 4 / 1e6 + 30;
  if (c.sampled_unusable)
    c.warnings.push_back(std::to_string(c.sampled_unusable) + " of " + std::to_string(n) +
                         " sampled patterns are unusable (constant inside the mask)");
  return c;
}

}  // namespace orderband
