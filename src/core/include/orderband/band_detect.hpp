// Band detection on the detector: a line Radon transform of the pattern (gnomonic traces are straight lines).
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <vector>

#include "orderband/detector_geometry.hpp"

namespace orderband {

/// A detected band: its plane normal in the sample frame and its strength.
struct DetectedBand {
  SampleDirection normal;
  double strength = 0;   ///< band-filtered mean along the line (pattern units)
  double theta_deg = 0;  ///< line angle on the image
  double rho_px = 0;     ///< signed distance of the line from the image centre
};

struct BandDetectSpec {
  int angle_steps = 120;            ///< line angles over [0°, 180°) (peaks are interpolated between them)
  int max_bands = 9;                ///< strongest bands kept
  double min_separation_px = 4;     ///< peaks whose lines stay this close across the screen are one band
  double band_half_width_px = 1.5;  ///< half-width of the band filter's positive centre
};

/// The great circle of a plane projects onto the flat screen as a straight
/// line (gnomonic projection), so bands are found as peaks of the planar
/// line Radon transform of the preprocessed pattern (mean along each line
/// inside the mask), filtered across ρ by a band-shaped kernel (positive
/// centre, negative flanks). Each peak line, with the beam spot, spans the
/// plane whose normal is returned.
class BandDetector {
 public:
  BandDetector(const DetectorGeometry& geometry, const std::vector<uint8_t>& mask, const BandDetectSpec& spec = {});
  std::vector<DetectedBand> detect(const float* pattern) const;

 private:
  DetectorGeometry geometry_;
  BandDetectSpec spec_;
  int width_, height_, rho_bins_;
  double rho_max_;
  std::vector<uint32_t> pixels_;   ///< mask pixels
  std::vector<uint16_t> rho_bin_;  ///< [angle][mask pixel] lower ρ bin
  std::vector<float> rho_frac_;    ///< interpolation weight of the upper bin
  std::vector<float> line_norm_;   ///< [angle][ρ] 1 / (pixels along the line)
};

}  // namespace orderband
