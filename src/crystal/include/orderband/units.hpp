// Angle conversions: degrees in files and messages, radians inside the code.
#pragma once

#include <numbers>

namespace orderband {

inline constexpr double kPi = std::numbers::pi;

constexpr double deg_to_rad(double degrees) { return degrees * kPi / 180.0; }
constexpr double rad_to_deg(double radians) { return radians * 180.0 / kPi; }

}  // namespace orderband
