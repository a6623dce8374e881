// What follows from a scan description: the beam footprint, the geometry for the stored patterns.
#include "orderband/scan_config.hpp"

#include <algorithm>
#include <cmath>

namespace orderband {

BeamFootprint beam_footprint(const ScanConfig& config) {
  const double tilt = config.geometry.sample_tilt_deg * M_PI / 180;
  const double elongation = config.beam.elongation ? *config.beam.elongation : 1 / std::max(std::cos(tilt), 0.05);
  return {config.beam.sigma_nm * 1e-3, config.beam.sigma_nm * 1e-3 * elongation};
}

GridReach beam_reach(const ScanConfig& config) {
  const BeamFootprint beam = beam_footprint(config);
  return {std::max(1, static_cast<int>(std::ceil(2 * beam.sigma_y_um / config.grid.row_spacing_um()))),
          std::max(1, static_cast<int>(std::ceil(2 * beam.sigma_x_um / config.grid.step_um)))};
}

DetectorGeometrySpec geometry_for(const ScanConfig& config, int width_px, int height_px) {
  DetectorGeometrySpec g = config.geometry;
  g.width_px = width_px;
  g.height_px = height_px;
  return g;
}

}  // namespace orderband
