// Electron optics: relativistic wavelength and Bragg angle.
#pragma once

namespace orderband {

/// CODATA 2018 exact or recommended values (SI).
namespace codata {
inline constexpr double planck_J_s = 6.62607015e-34;            // exact
inline constexpr double electron_mass_kg = 9.1093837015e-31;    // CODATA 2018
inline constexpr double elementary_charge_C = 1.602176634e-19;  // exact
inline constexpr double speed_of_light_m_s = 299792458.0;       // exact
}  // namespace codata

/// Relativistic electron wavelength in ångström for an accelerating voltage
/// in kV: λ = h / sqrt(2 m0 e V (1 + e V / (2 m0 c²))). Throws for kV ≤ 0.
double electron_wavelength_A(double kilovolts);

/// Bragg angle θ_B = asin(λ / 2d) in radians for a d-spacing and a
/// wavelength, both in ångström. Throws when λ > 2d (no reflection).
double bragg_angle_rad(double d_spacing_A, double wavelength_A);

}  // namespace orderband
