// Electron scattering factors (International Tables Vol. C, Table 4.3.2.2) and structure factors.
#include "orderband/scattering.hpp"

#include <gemmi/c4322.hpp>
#include <gemmi/elem.hpp>

#include <cmath>

#include "orderband/error.hpp"
#include "orderband/units.hpp"

namespace orderband {
namespace {
gemmi::El element_of(const std::string& symbol) { return gemmi::find_element(symbol.c_str()); }
}  // namespace

bool has_electron_scattering_factor(const std::string& element) {
  const gemmi::El el = element_of(element);
  return el != gemmi::El::X && gemmi::C4322<double>::has(el);
}

double electron_scattering_factor_A(const std::string& element, double s_inv_A) {
  if (!has_electron_scattering_factor(element)) fail("no electron scattering factor for element '", element, "'");
  return gemmi::C4322<double>::get(element_of(element)).calculate_sf(s_inv_A * s_inv_A);
}

std::complex<double> structure_factor_A(const Phase& phase, const Eigen::Vector3i& hkl) {
  const double s = 0.5 / phase.cell.d_spacing_A(hkl);  // sin θ / λ = 1 / (2d)
  std::complex<double> F{0.0, 0.0};
  for (const AtomSite& site : phase.unit_cell_sites) {
    const double f = electron_scattering_factor_A(site.element, s);
    const double debye_waller = std::exp(-8.0 * kPi * kPi * site.u_iso_A2 * s * s);
    const double phase_angle = 2.0 * kPi * hkl.cast<double>().dot(site.fract);
    F += site.occupancy * f * debye_waller * std::polar(1.0, phase_angle);
  }
  return F;
}

}  // namespace orderband
