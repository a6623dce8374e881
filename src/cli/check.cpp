// `orderband check SCAN.toml`: validate a scan description and print what a run will do.
#include <cstdio>
#include <iostream>
#include <memory>

#include "command.hpp"
#include "orderband/ordered_fraction.hpp"
#include "orderband/pattern_sample.hpp"
#include "orderband/scan_check.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/units.hpp"
#include "orderband/version.hpp"

namespace orderband::cli {

std::function<int()> setup_check(CLI::App& sub) {
  struct Options {
    std::string scan;
    size_t sample = kPatternSamplePoints;   // as map samples
    double d_min = FractionSpec{}.d_min_A;  // the families map uses
  };
  auto o = std::make_shared<Options>();
  sub.add_option("scan", o->scan, "scan description (TOML)")->required();
  sub.add_option("--sample", o->sample, "patterns preprocessed (and timed) to check the data, at least 1")
      ->check(finite_within(1, 1e9, false, false))
      ->capture_default_str();
  sub.add_option("--d-min", o->d_min, "smallest d-spacing of the families listed (Å), in [0.3, 100]")
      ->check(finite_within(0.3, 100, false, false))
      ->capture_default_str();
  return [o]() {
    const ScanCheck c =
        check_scan(read_scan_inputs(read_scan_config(o->scan), InputHashing::skip), o->sample, o->d_min);
    const ScanConfig& s = c.config;
    std::printf("orderband %s check of %s\n", kVersion, s.path.c_str());
    std::printf("scan:        %s grid, %d rows x %d cols = %zu points, step %.4g um\n", name_of(s.grid.kind).data(),
                s.grid.rows, s.grid.cols, s.grid.count(), s.grid.step_um);
    std::printf("field:       %.4g x %.4g um\n", c.field_width_um, c.field_height_um);
    std::printf("patterns:    %s, %d x %d px\n", c.source_description.c_str(), c.width_px, c.height_px);
    std::printf("geometry:    PC (%.3f, %.3f) px, distance %.3f px, sample tilt %.2f deg, detector tilt %.2f deg\n",
                s.geometry.pc_px.x(), s.geometry.pc_px.y(), s.geometry.distance_px, s.geometry.sample_tilt_deg,
                s.geometry.detector_tilt_deg);
    std::printf("angular field: %.2f x %.2f deg, %.4f deg per pixel at the PC, corners up to %.2f deg from the PC\n",
                c.angular_width_deg, c.angular_height_deg, c.angular_pixel_deg, c.max_angle_from_pc_deg);
    std::printf("PC direction (sample frame): [%.4f, %.4f, %.4f]\n", c.pc_direction_sample.x(),
                c.pc_direction_sample.y(), c.pc_direction_sample.z());
    std::printf("voltage:     %.4g kV\n", s.kv);
    std::printf("phases:      pair %s\n", c.pair_name.c_str());
    std::printf("%-9s %8s %10s %14s %12s  %s\n", "family", "d/A", "bragg/deg", "band_width/px", "sensitivity", "role");
    for (const FamilyVisibility& f : c.families)
      std::printf("%-9s %8.4f %10.3f %14.2f %12.3f  %s\n", f.family.family.label().c_str(), f.family.d_ordered_A,
                  rad_to_deg(f.family.bragg_ordered_rad), f.band_width_px, f.family.sensitivity,
                  f.family.sensitivity >= 0.5 ? "superlattice" : "fundamental");
    std::printf(
        "raw sample:  %zu patterns read, %.1f hot pixels per pattern (brighter than all 8 neighbours by "
        "%.3g MADs; filter %s), stored width %s\n",
        c.sample.patterns, c.sample.hot_pixels_per_pattern, c.sample.hot_pixel_threshold,
        s.preprocess.hot_pixel_filter ? "on" : "off",
        c.sample.patterns ? (std::to_string(c.sample.declared_width_px) + " px confirmed").c_str()
                          : "not checked (no readable pattern)");
    std::printf("sampled:     %zu patterns preprocessed, %zu unusable, %.3f ms per pattern (one thread)\n",
                c.sampled_points, c.sampled_unusable, 1e3 * c.preprocess_seconds_per_point);
    std::printf("estimate:    preprocessing %.1f s on one thread; peak memory about %.0f MB\n",
                c.estimated_preprocess_seconds, c.estimated_memory_mb);
    for (const std::string& w : c.warnings) std::printf("warning:     %s\n", w.c_str());
    std::printf("ok\n");
    return 0;
  };
}

}  // namespace orderband::cli
