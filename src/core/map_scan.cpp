// The per-scan analysis chain.
#include "orderband/map_scan.hpp"

#include "orderband/laue_group.hpp"
#include "orderband/pair_catalog.hpp"
#include "orderband/units.hpp"

namespace orderband {

MapResults map_scan(const ScanConfig& config, const MapOptions& options, const StageProgress& progress,
                    RowStore* store) {
  MapResults r;
  const OrderingPair pair = load_phases(config.phases);
  r.ordered_phase = pair.ordered.name;
  r.disordered_phase = pair.disordered.name;
  auto stage = [&](const std::string& name) {
    return [&, name](size_t d, size_t t) {
      if (progress) progress(name, d, t);
    };
  };
  r.orientations = orient_scan(config, options.orient, stage("orientations"), store);
  r.fraction = ordered_fraction_scan(config, r.orientations, options.fraction, stage("ordered fraction"), store);

  const ScanGrid& grid = config.grid;
  r.segmentation = segment_particles(grid, r.fraction.fraction, r.orientations.grains.id, options.segment);
  r.classes = class_statistics(grid, r.segmentation, options.classes);
  r.e562 = astm_e562_ci(grid, r.fraction.raw, options.e562_tiles);
  r.bootstrap = block_bootstrap_ci(grid, r.fraction.raw, options.bootstrap_block, options.bootstrap_resamples, 1);
  std::vector<double> secondary;
  for (const Particle2D& p : r.segmentation.particles)
    if (p.size_class == "secondary" && !p.touches_border) secondary.push_back(p.ecd_um);
  if (secondary.size() >= 5) r.unfolding = saltykov_unfold(secondary, options.unfold_classes, 1.0);

  if (options.master_spheres) {
    auto source = open_pattern_source(config.patterns, grid);
    const DetectorGeometry geometry(geometry_for(config, source->width(), source->height()));
    const DetectorRays rays(geometry);
    const Preprocessor pre = make_preprocessor(config.preprocess, *source);
    const SphereGrid sphere_grid(SphereGrid::nside_for(0.5 * geometry.angular_pixel_size_rad()));
    SphereMap dis(sphere_grid), ord(sphere_grid);
    PreprocessedRows rows(*source, grid, pre);
    std::vector<float> patterns;
    std::vector<uint8_t> usable;
    int row = 0;
    while (rows.next(patterns, usable)) {
      for (int col = 0; col < grid.cols; ++col) {
        const size_t k = grid.index({row, col});
        const float f = r.fraction.fraction[k];
        if (!usable[col] || !r.orientations.orientation[k] || !std::isfinite(f) || (f >= 0.2 && f <= 0.8)) continue;
        back_project(patterns.data() + static_cast<size_t>(col) * source->pixels(), pre.mask(), rays,
                     *r.orientations.orientation[k], f > 0.8 ? ord : dis);
      }
      ++row;
      if (progress) progress("master spheres", static_cast<size_t>(row) * grid.cols, grid.count());
    }
    const CrystalSymmetry symmetry(laue_rotations(pair.disordered));
    r.master_disordered.emplace(fold_by_symmetry(dis, symmetry));
    r.master_ordered.emplace(fold_by_symmetry(ord, symmetry));
  }
  return r;
}

}  // namespace orderband
