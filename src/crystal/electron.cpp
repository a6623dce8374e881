// Relativistic electron wavelength and Bragg angle.
#include "orderband/electron.hpp"

#include <cmath>

#include "orderband/error.hpp"

namespace orderband {

double electron_wavelength_A(double kilovolts) {
  if (!(kilovolts > 0.0) || !std::isfinite(kilovolts))
    fail("accelerating voltage must be a positive number of kV, got ", kilovolts);
  using namespace codata;
  const double volts = kilovolts * 1e3;
  const double eV = elementary_charge_C * volts;
  const double momentum = std::sqrt(2.0 * electron_mass_kg * eV *
                                    (1.0 + eV / (2.0 * electron_mass_kg * speed_of_light_m_s * speed_of_light_m_s)));
  return planck_J_s / momentum * 1e10;
}

double bragg_angle_rad(double d_spacing_A, double wavelength_A) {
  if (!(d_spacing_A > 0.0)) fail("d-spacing must be positive, got ", d_spacing_A, " Å");
  const double x = wavelength_A / (2.0 * d_spacing_A);
  if (x > 1.0) fail("no Bragg reflection: λ = ", wavelength_A, " Å exceeds 2d = ", 2 * d_spacing_A, " Å");
  return std::asin(x);
}

}  // namespace orderband
