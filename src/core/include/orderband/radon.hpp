// Spherical Radon transforms on HEALPix maps: Funk–Radon by spherical harmonics, and direct band integrals.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "orderband/sphere.hpp"

namespace orderband {

/// Funk–Radon transform: for every pixel centre taken as a plane normal n,
/// the mean of f over the great circle n·x = 0. Computed through spherical
/// harmonics (HEALPix map2alm with 3 iterations, then alm2map): by the
/// Funk–Hecke theorem the great-circle mean multiplies a_lm by P_l(0) (the
/// integral by 2π P_l(0); Funk 1913; Helgason, Integral Geometry and Radon
/// Transforms, 2011), so odd l vanish. `values` is a dense RING-ordered map.
std::vector<double> funk_radon_sh(const SphereGrid& grid, const std::vector<double>& values, int lmax);

/// Direct band integral: for each normal, the mean of the covered pixels of
/// `map` with |asin(n·x)| ≤ half_width (a band of half-width half_width
/// around the great circle), and the covered solid angle. With half_width → 0
/// it tends to the Funk–Radon mean; for a finite band the Funk–Hecke factor is
/// (1 / 2 sin w) ∫_{−sin w}^{sin w} P_l(t) dt.
struct BandIntegral {
  double mean = 0;
  double weight = 0;  ///< covered solid angle (sr)
};
std::vector<BandIntegral> band_radon_direct(const SphereMap& map, const std::vector<Eigen::Vector3d>& normals,
                                            double half_width_rad);

/// Legendre polynomial P_l(x) by the three-term recurrence.
double legendre(int l, double x);

}  // namespace orderband
