// Electron wavelength and Bragg angle against published values.
#include "orderband/electron.hpp"

#include <gtest/gtest.h>

#include "orderband/error.hpp"
#include "orderband/phase.hpp"
#include "orderband/units.hpp"

namespace orderband {
namespace {

TEST(ElectronWavelength, MatchesPublishedTableValues) {
  // Relativistic wavelengths, tolerance 0.01 pm = 1e-4 Å. 10, 20, 30 and 200 kV:
  // standard electron-optics wavelength tables (200 kV also Williams & Carter,
  // Transmission Electron Microscopy, 2nd ed. 2009; table number from memory).
  EXPECT_NEAR(electron_wavelength_A(10.0) * 100, 12.2047, 0.01);
  EXPECT_NEAR(electron_wavelength_A(20.0) * 100, 8.5885, 0.01);
  EXPECT_NEAR(electron_wavelength_A(30.0) * 100, 6.9791, 0.01);
  EXPECT_NEAR(electron_wavelength_A(200.0) * 100, 2.5079, 0.01);
}

TEST(ElectronWavelength, RelativisticCorrectionMatters) {
  // The non-relativistic λ = h / sqrt(2 m e V) at 200 kV is 2.7416 pm, so the
  // 0.01 pm tolerance above does tell the two formulas apart.
  EXPECT_GT(std::abs(electron_wavelength_A(200.0) * 100 - 2.7416), 0.2);
}

TEST(ElectronWavelength, RejectsNonPositiveVoltage) {
  EXPECT_THROW(electron_wavelength_A(0.0), Error);
  EXPECT_THROW(electron_wavelength_A(-5.0), Error);
  EXPECT_THROW(electron_wavelength_A(std::nan("")), Error);
}

TEST(BraggAngle, PureNickel111At20kV) {
  // Ni, a = 3.524 Å (A. Taylor, J. Inst. Metals 77 (1950) 585: 3.5239 Å):
  // d111 = a/√3 = 2.0346 Å, θ_B = asin(λ/2d) ≈ 1.209° at 20 kV.
  const UnitCell ni(3.524, 3.524, 3.524, 90, 90, 90);
  const double d111 = ni.d_spacing_A({1, 1, 1});
  EXPECT_NEAR(d111, 2.0346, 1e-4);
  EXPECT_NEAR(rad_to_deg(bragg_angle_rad(d111, electron_wavelength_A(20.0))), 1.209, 1e-3);
}

TEST(BraggAngle, RejectsImpossibleReflection) {
  EXPECT_THROW(bragg_angle_rad(0.01, 0.085885), Error);
  EXPECT_THROW(bragg_angle_rad(-1.0, 0.085885), Error);
}

}  // namespace
}  // namespace orderband
