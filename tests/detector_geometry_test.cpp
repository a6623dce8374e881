// Detector geometry: frame conventions pinned by hand-computed cases.
#include "orderband/detector_geometry.hpp"

#include <gtest/gtest.h>

#include <Eigen/Dense>

#include "orderband/error.hpp"
#include "orderband/rotation.hpp"
#include "orderband/units.hpp"

namespace orderband {
namespace {

DetectorGeometrySpec spec(double tilt = 70, double det_tilt = 0) {
  DetectorGeometrySpec s;
  s.width_px = 100;
  s.height_px = 80;
  s.pc_px = {30.5, 20.5};
  s.distance_px = 50;
  s.sample_tilt_deg = tilt;
  s.detector_tilt_deg = det_tilt;
  return s;
}

double angle_deg(const Eigen::Vector3d& a, const Eigen::Vector3d& b) {
  return rad_to_deg(std::acos(std::clamp(a.normalized().dot(b.normalized()), -1.0, 1.0)));
}

TEST(DetectorGeometry, PatternCentreMapsToMinusZD) {
  const DetectorGeometry g(spec(70, 7));
  EXPECT_NEAR((g.direction_detector({30.5, 20.5}).vec() - Eigen::Vector3d(0, 0, -1)).norm(), 0, 1e-15);
  // Pixel (30, 20) has its centre on the PC.
  const Eigen::Vector3d minus_zd_in_sample = g.sample_axes_in_lab().transpose() * (-g.detector_axes_in_lab().col(2));
  EXPECT_NEAR((g.pixel_direction(30, 20).vec() - minus_zd_in_sample).norm(), 0, 1e-15);
}

TEST(DetectorGeometry, FramesByHand) {
  // σ = 70°, θ_d = 0 (design notes, section 4): x_S = x_L, z_S = −(0, sin σ, cos σ),
  // y_S = z_S × x_S = (0, −cos σ, sin σ); the PC direction is +y_L, which in the sample
  // frame is (0, −cos σ, −sin σ): it leaves the surface (z_S points into the sample).
  const DetectorGeometry g(spec());
  const double s = std::sin(deg_to_rad(70)), c = std::cos(deg_to_rad(70));
  EXPECT_NEAR((g.sample_axes_in_lab().col(1) - Eigen::Vector3d(0, -c, s)).norm(), 0, 1e-15);
  EXPECT_NEAR((g.pixel_direction(30, 20).vec() - Eigen::Vector3d(0, -c, -s)).norm(), 0, 1e-15);
  // Image right (x_D) is the tilt axis x_L = x_S; image up (y_D) is z_L.
  EXPECT_NEAR((g.detector_axes_in_lab().col(0) - Eigen::Vector3d(1, 0, 0)).norm(), 0, 1e-15);
  EXPECT_NEAR((g.detector_axes_in_lab().col(1) - Eigen::Vector3d(0, 0, 1)).norm(), 0, 1e-15);
  // A pixel right of the PC leans toward +x_S; a pixel above it toward +z_L (−z_S·cos σ …).
  EXPECT_GT(g.pixel_direction(80, 20).vec().x(), 0.7);
  EXPECT_GT((g.sample_axes_in_lab() * g.pixel_direction(30, 0).vec()).z(), 0.3);
  // Right-handed frames.
  EXPECT_NEAR(g.sample_axes_in_lab().determinant(), 1, 1e-15);
  EXPECT_NEAR(g.detector_axes_in_lab().determinant(), 1, 1e-15);
}

TEST(DetectorGeometry, PositiveDetectorTiltTurnsTheTopTowardTheSample) {
  const DetectorGeometry g(spec(70, 10));
  // y_D = R_x(θ_d) z_L = (0, −sin θ_d, cos θ_d): the top moves toward −y_L, the sample side.
  EXPECT_NEAR(
      (g.detector_axes_in_lab().col(1) - Eigen::Vector3d(0, -std::sin(deg_to_rad(10)), std::cos(deg_to_rad(10))))
          .norm(),
      0, 1e-15);
}

TEST(DetectorGeometry, AnglesBetweenPixelsEqualPlanarGeometry) {
  // In the detector plane, (x − pc_x, pc_y − y, −L): pixel (80, 20) → (50, 0, −50), pixel
  // (30, 70) → (0, −50, −50): 45° each from the PC and 60° from each other (cos = 2500/5000).
  for (double tilt : {0.0, 70.0}) {
    const DetectorGeometry g(spec(tilt, 5));
    const auto pc = g.pixel_direction(30, 20).vec(), a = g.pixel_direction(80, 20).vec(),
               b = g.pixel_direction(30, 70).vec();
    EXPECT_NEAR(angle_deg(pc, a), 45.0, 1e-12);
    EXPECT_NEAR(angle_deg(pc, b), 45.0, 1e-12);
    EXPECT_NEAR(angle_deg(a, b), 60.0, 1e-12);
  }
}

TEST(DetectorGeometry, PlaneTracesPassThroughPerpendicularPixels) {
  const DetectorGeometry g(spec(70, 3));
  const auto normals = random_rotations(30, 4);
  int checked = 0;
  for (const Rotation& r : normals) {
    const SampleDirection n(r.matrix().row(2).transpose());
    for (double offset_deg : {0.0, 1.2, -1.2}) {
      for (const PixelPoint& p : g.trace(n, deg_to_rad(offset_deg))) {
        // 0.01° = 1.75e-4 rad: the tolerance; the construction is exact to rounding.
        const double alpha = rad_to_deg(std::asin(g.direction_sample(p).dot(n)));
        EXPECT_NEAR(alpha, offset_deg, 0.01);
        ++checked;
      }
    }
  }
  EXPECT_GT(checked, 1000);
  // Projection inverts the pixel direction.
  const auto p = g.project(g.pixel_direction(12, 34));
  ASSERT_TRUE(p.has_value());
  EXPECT_NEAR(p->x, 12.5, 1e-9);
  EXPECT_NEAR(p->y, 34.5, 1e-9);
  EXPECT_FALSE(g.project(-g.pixel_direction(12, 34)).has_value());
}

TEST(DetectorGeometry, AngularField) {
  DetectorGeometrySpec s = spec();
  s.width_px = s.height_px = 60;
  s.pc_px = {30, 30};
  s.distance_px = 60;
  const DetectorGeometry g(s);
  EXPECT_NEAR(rad_to_deg(g.angular_width_rad()), 2 * rad_to_deg(std::atan(0.5)), 1e-12);  // 53.13°
  EXPECT_NEAR(rad_to_deg(g.angular_pixel_size_rad()), rad_to_deg(std::atan(1.0 / 60)), 1e-12);
  EXPECT_NEAR(rad_to_deg(g.max_angle_from_pc_rad()), rad_to_deg(std::atan(std::sqrt(2.0) / 2)), 1e-12);
}

TEST(DetectorGeometry, PatternCentreDriftByHand) {
  DetectorGeometrySpec s = spec();
  s.screen_pixel_um = 20.0;
  s.binning = 2;  // a stored pixel is 40 µm on the screen
  const DetectorGeometry g(s);
  // Along x_S (the tilt axis, = x_D at θ_d = 0): PC x moves by x / 40 µm.
  const DetectorGeometry gx = g.at_beam_offset(400, 0);
  EXPECT_NEAR(gx.spec().pc_px.x(), 30.5 + 10, 1e-12);
  EXPECT_NEAR(gx.spec().pc_px.y(), 20.5, 1e-12);
  EXPECT_NEAR(gx.spec().distance_px, 50, 1e-12);
  // Along y_S = (0, −cos σ, sin σ): the spot rises by sin σ·y (PC y decreases) and moves
  // away from the screen by cos σ·y (distance grows).
  const DetectorGeometry gy = g.at_beam_offset(0, 400);
  EXPECT_NEAR(gy.spec().pc_px.y(), 20.5 - 10 * std::sin(deg_to_rad(70)), 1e-12);
  EXPECT_NEAR(gy.spec().distance_px, 50 + 10 * std::cos(deg_to_rad(70)), 1e-12);
  // Without a pixel size the PC does not drift.
  EXPECT_EQ(DetectorGeometry(spec()).at_beam_offset(400, 400).spec().pc_px, spec().pc_px);
}

TEST(DetectorGeometry, BinningScalesPatternCentreAndDistance) {
  DetectorGeometrySpec s = spec();
  const DetectorGeometry b = DetectorGeometry(s).binned(2);
  EXPECT_EQ(b.width(), 50);
  EXPECT_NEAR(b.spec().distance_px, 25, 1e-12);
  // The same physical direction: binned pixel (15, 10) centre = full-resolution point (31, 21).
  EXPECT_NEAR((b.direction_sample({15.5, 10.5}).vec() - DetectorGeometry(s).direction_sample({31, 21}).vec()).norm(), 0,
              1e-12);
  EXPECT_THROW(DetectorGeometry(s).binned(3), Error);  // 100 x 80 is not divisible by 3
}

TEST(DetectorGeometry, RejectsImplausibleValues) {
  auto bad = [](auto mutate) {
    DetectorGeometrySpec s = spec();
    mutate(s);
    EXPECT_THROW(DetectorGeometry{s}, Error);
  };
  bad([](auto& s) { s.distance_px = 0; });
  bad([](auto& s) { s.distance_px = 1; });    // screen would subtend ~180°
  bad([](auto& s) { s.distance_px = 1e5; });  // screen would subtend ~0°
  bad([](auto& s) { s.pc_px = {500, 20}; });
  bad([](auto& s) { s.width_px = 0; });
  bad([](auto& s) { s.sample_tilt_deg = 120; });
  bad([](auto& s) { s.screen_pixel_um = -1.0; });
}

}  // namespace
}  // namespace orderband
