// Detector geometry: frames, pixel directions, gnomonic traces, PC drift.
#include "orderband/detector_geometry.hpp"

#include <Eigen/Dense>
#include <cmath>

#include "orderband/error.hpp"
#include "orderband/units.hpp"

namespace orderband {

DetectorGeometry::DetectorGeometry(const DetectorGeometrySpec& spec) : spec_(spec) {
  if (spec.width_px <= 0 || spec.height_px <= 0)
    fail("pattern size must be positive, got ", spec.width_px, " x ", spec.height_px, " px");
  if (!(spec.distance_px > 0) || !std::isfinite(spec.distance_px))
    fail("detector distance must be positive, got ", spec.distance_px, " px");
  // Plausible range: the screen subtends between about 10 and 170 degrees.
  const double diag = std::hypot(spec.width_px, spec.height_px);
  if (spec.distance_px < 0.05 * diag || spec.distance_px > 20 * diag)
    fail("detector distance ", spec.distance_px, " px is implausible for a ", spec.width_px, " x ", spec.height_px,
         " px pattern (expected between ", 0.05 * diag, " and ", 20 * diag,
         " px); give distance_px in pixels of the stored pattern");
  const double w = spec.width_px, h = spec.height_px;
  if (!(spec.pc_px.x() > -w && spec.pc_px.x() < 2 * w && spec.pc_px.y() > -h && spec.pc_px.y() < 2 * h))
    fail("pattern centre (", spec.pc_px.x(), ", ", spec.pc_px.y(), ") px is implausibly far outside the ", w, " x ", h,
         " px pattern; give pc_px in pixels from the top-left corner (x right, y down)");
  if (!(spec.sample_tilt_deg >= 0 && spec.sample_tilt_deg <= 90))
    fail("sample tilt must be within [0, 90] degrees, got ", spec.sample_tilt_deg);
  if (!(std::abs(spec.detector_tilt_deg) <= 45))
    fail("detector tilt must be within [-45, 45] degrees, got ", spec.detector_tilt_deg);
  if (spec.binning < 1) fail("binning must be a positive integer, got ", spec.binning);
  if (spec.screen_pixel_um && !(*spec.screen_pixel_um > 0))
    fail("screen pixel size must be positive, got ", *spec.screen_pixel_um, " µm");

  const double s = std::sin(deg_to_rad(spec.sample_tilt_deg)), c = std::cos(deg_to_rad(spec.sample_tilt_deg));
  // Sample frame: x_S = x_L, z_S = -(0, sin σ, cos σ), y_S = z_S × x_S.
  const Eigen::Vector3d xs(1, 0, 0), zs(0, -s, -c);
  const Eigen::Vector3d ys = zs.cross(xs);
  sample_in_lab_.col(0) = xs;
  sample_in_lab_.col(1) = ys;
  sample_in_lab_.col(2) = zs;
  // Detector frame at θ_d = 0: x_D = x_L, y_D = z_L, z_D = -y_L; θ_d rotates it about x_L.
  const double td = deg_to_rad(spec.detector_tilt_deg);
  const Eigen::Matrix3d rx = Eigen::AngleAxisd(td, Eigen::Vector3d::UnitX()).toRotationMatrix();
  detector_in_lab_.col(0) = rx * Eigen::Vector3d(1, 0, 0);
  detector_in_lab_.col(1) = rx * Eigen::Vector3d(0, 0, 1);
  detector_in_lab_.col(2) = rx * Eigen::Vector3d(0, -1, 0);
  detector_to_sample_ = sample_in_lab_.transpose() * detector_in_lab_;
}

DetectorDirection DetectorGeometry::direction_detector(const PixelPoint& p) const {
  return DetectorDirection(Eigen::Vector3d(p.x - spec_.pc_px.x(), spec_.pc_px.y() - p.y, -spec_.distance_px));
}

SampleDirection DetectorGeometry::direction_sample(const PixelPoint& p) const {
  return to_sample(direction_detector(p));
}

std::vector<Eigen::Vector3d> DetectorGeometry::pixel_directions() const {
  std::vector<Eigen::Vector3d> out;
  out.reserve(static_cast<size_t>(width()) * height());
  for (int i = 0; i < height(); ++i)
    for (int j = 0; j < width(); ++j) out.push_back(pixel_direction(j, i).vec());
  return out;
}

SampleDirection DetectorGeometry::to_sample(const DetectorDirection& d) const {
  return SampleDirection(detector_to_sample_ * d.vec());
}

DetectorDirection DetectorGeometry::to_detector(const SampleDirection& s) const {
  return DetectorDirection(detector_to_sample_.transpose() * s.vec());
}

std::optional<PixelPoint> DetectorGeometry::project(const SampleDirection& s) const {
  const Eigen::Vector3d d = to_detector(s).vec();
  if (d.z() >= -1e-12) return std::nullopt;  // the screen lies along -z_D
  const double t = spec_.distance_px / -d.z();
  return PixelPoint{spec_.pc_px.x() + t * d.x(), spec_.pc_px.y() - t * d.y()};
}

std::vector<PixelPoint> DetectorGeometry::trace(const SampleDirection& plane_normal, double offset_rad,
                                                int samples) const {
  const Eigen::Vector3d& n = plane_normal.vec();
  Eigen::Vector3d e1 = n.unitOrthogonal();
  const Eigen::Vector3d e2 = n.cross(e1);
  std::vector<PixelPoint> pts;
  for (int k = 0; k < samples; ++k) {
    const double t = 2 * kPi * k / samples;
    const Eigen::Vector3d v = std::sin(offset_rad) * n + std::cos(offset_rad) * (std::cos(t) * e1 + std::sin(t) * e2);
    if (const auto p = project(SampleDirection(v)))
      if (p->x >= 0 && p->x <= width() && p->y >= 0 && p->y <= height()) pts.push_back(*p);
  }
  return pts;
}

double DetectorGeometry::angular_pixel_size_rad() const { return std::atan(1.0 / spec_.distance_px); }

double DetectorGeometry::angular_width_rad() const {
  const double L = spec_.distance_px;
  return std::atan(spec_.pc_px.x() / L) + std::atan((width() - spec_.pc_px.x()) / L);
}

double DetectorGeometry::angular_height_rad() const {
  const double L = spec_.distance_px;
  return std::atan(spec_.pc_px.y() / L) + std::atan((height() - spec_.pc_px.y()) / L);
}

double DetectorGeometry::max_angle_from_pc_rad() const {
  const DetectorDirection pc(Eigen::Vector3d(0, 0, -1));
  double best = 0;
  for (const PixelPoint& corner : {PixelPoint{0, 0}, PixelPoint{double(width()), 0}, PixelPoint{0, double(height())},
                                   PixelPoint{double(width()), double(height())}})
    best = std::max(best, std::acos(std::clamp(direction_detector(corner).dot(pc), -1.0, 1.0)));
  return best;
}

DetectorGeometry DetectorGeometry::at_beam_offset(double x_um, double y_um) const {
  if (!spec_.screen_pixel_um) return *this;
  const double pixel_um = *spec_.screen_pixel_um * spec_.binning;  // size of a stored pixel on the screen
  // Beam spot displacement in the lab frame, then in detector components (pixels).
  const Eigen::Vector3d d_lab = (x_um * sample_in_lab_.col(0) + y_um * sample_in_lab_.col(1)) / pixel_um;
  const Eigen::Vector3d d = detector_in_lab_.transpose() * d_lab;
  DetectorGeometrySpec moved = spec_;
  moved.pc_px.x() += d.x();
  moved.pc_px.y() -= d.y();    // image y runs down, y_D up
  moved.distance_px += d.z();  // the screen lies along -z_D from the spot
  return DetectorGeometry(moved);
}

DetectorGeometry DetectorGeometry::binned(int factor) const {
  if (factor < 1) fail("binning factor must be a positive integer, got ", factor);
  if (spec_.width_px % factor || spec_.height_px % factor)
    fail("pattern of ", spec_.width_px, " x ", spec_.height_px, " px cannot be binned by ", factor);
  DetectorGeometrySpec b = spec_;
  b.width_px /= factor;
  b.height_px /= factor;
  b.pc_px /= factor;
  b.distance_px /= factor;
  b.binning *= factor;
  return DetectorGeometry(b);
}

}  // namespace orderband
