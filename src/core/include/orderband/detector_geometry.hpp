// Detector geometry: every pattern pixel as a unit direction in the sample frame.
#pragma once

#include <Eigen/Core>
#include <optional>
#include <vector>

#include "orderband/frames.hpp"

namespace orderband {

/// Calibrated geometry of one pattern, in pixels of the stored pattern (see
/// docs/conventions.md for the frames and a figure).
struct DetectorGeometrySpec {
  int width_px = 0;              ///< stored pattern width (columns)
  int height_px = 0;             ///< stored pattern height (rows)
  Eigen::Vector2d pc_px{0, 0};   ///< screen point nearest the beam spot: x right, y down from the top-left corner
  double distance_px = 0;        ///< beam spot to screen distance
  double sample_tilt_deg = 70;   ///< σ: outward surface normal (0, sin σ, cos σ) in the lab frame
  double detector_tilt_deg = 0;  ///< θ_d: rotation of the screen about x_L; positive tilts its top toward the sample
  int binning = 1;               ///< binning already applied to the stored patterns (information; scales pixel size)
  /// Physical size of one unbinned screen pixel (µm); enables the PC drift
  /// across the scan. Absent: the PC is the same for every point.
  std::optional<double> screen_pixel_um;
};

/// A sub-pixel position on the stored pattern: x right, y down, pixel (j, i)
/// covering [j, j+1) × [i, i+1).
struct PixelPoint {
  double x = 0, y = 0;
};

/// The detector geometry for one beam position, with the frame relations.
class DetectorGeometry {
 public:
  /// Validates the spec; throws orderband::Error naming the bad value.
  explicit DetectorGeometry(const DetectorGeometrySpec& spec);

  const DetectorGeometrySpec& spec() const { return spec_; }
  int width() const { return spec_.width_px; }
  int height() const { return spec_.height_px; }

  /// Lab-frame axes of the sample and detector frames.
  Eigen::Matrix3d sample_axes_in_lab() const { return sample_in_lab_; }      ///< columns x_S, y_S, z_S
  Eigen::Matrix3d detector_axes_in_lab() const { return detector_in_lab_; }  ///< columns x_D, y_D, z_D

  /// Direction from the beam spot to a sub-pixel point, in the detector frame.
  DetectorDirection direction_detector(const PixelPoint& p) const;
  /// Same, in the sample frame.
  SampleDirection direction_sample(const PixelPoint& p) const;
  /// Direction of the centre of pixel (column j, row i) in the sample frame.
  SampleDirection pixel_direction(int j, int i) const { return direction_sample({j + 0.5, i + 0.5}); }
  /// All pixel-centre directions in the sample frame, row-major (index i·width + j).
  std::vector<Eigen::Vector3d> pixel_directions() const;

  SampleDirection to_sample(const DetectorDirection& d) const;
  DetectorDirection to_detector(const SampleDirection& s) const;
  /// Where a sample-frame direction meets the screen (gnomonic projection);
  /// empty if it points away from the screen.
  std::optional<PixelPoint> project(const SampleDirection& s) const;

  /// Points on the screen of the cone of directions v with v·n = sin(offset):
  /// the plane trace (offset 0, a great circle → straight line) or a band
  /// edge (offset ±θ_B, a small circle → conic). Only points inside the image.
  std::vector<PixelPoint> trace(const SampleDirection& plane_normal, double offset_rad, int samples = 2000) const;

  /// Angle (radians) subtended by one pixel at the pattern centre: atan(1/L).
  double angular_pixel_size_rad() const;
  /// Full angular extent of the screen from the beam spot (radians), along
  /// the image width and height through the PC, and the largest angle
  /// between the PC direction and a screen corner.
  double angular_width_rad() const;
  double angular_height_rad() const;
  double max_angle_from_pc_rad() const;

  /// Geometry for a beam moved by (x_um, y_um) along the sample axes x_S,
  /// y_S from the reference point (PC drift). Requires screen_pixel_um;
  /// without it returns *this unchanged.
  DetectorGeometry at_beam_offset(double x_um, double y_um) const;

  /// Geometry of the same screen binned by `factor` (all of PC and distance divided).
  DetectorGeometry binned(int factor) const;

 private:
  DetectorGeometrySpec spec_;
  Eigen::Matrix3d sample_in_lab_, detector_in_lab_;
  Eigen::Matrix3d detector_to_sample_;  ///< columns x_D, y_D, z_D in the sample frame
};

}  // namespace orderband
