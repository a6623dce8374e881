// Spherical Radon transforms.
#include "orderband/radon.hpp"

#include <healpix_cxx/alm.h>
#include <healpix_cxx/alm_healpix_tools.h>
#include <healpix_cxx/healpix_map.h>

#include <cmath>

#include "orderband/error.hpp"

namespace orderband {

double legendre(int l, double x) {
  if (l == 0) return 1.0;
  double p0 = 1.0, p1 = x;
  for (int k = 2; k <= l; ++k) {
    const double p2 = ((2 * k - 1) * x * p1 - (k - 1) * p0) / k;
    p0 = p1, p1 = p2;
  }
  return p1;
}

std::vector<double> funk_radon_sh(const SphereGrid& grid, const std::vector<double>& values, int lmax) {
  if (static_cast<long>(values.size()) != grid.npix()) fail("Funk-Radon: map has the wrong number of pixels");
  if (lmax < 0 || lmax > 4 * grid.nside()) fail("Funk-Radon: lmax must be within [0, 4 nside], got ", lmax);
  try {
    Healpix_Map<double> map(grid.nside(), RING, SET_NSIDE);
    for (long p = 0; p < grid.npix(); ++p) map[static_cast<int>(p)] = values[p];
    Alm<xcomplex<double>> alm(lmax, lmax);
    map2alm_iter(map, alm, 3);
    std::vector<double> factor(lmax + 1);
    for (int l = 0; l <= lmax; ++l) factor[l] = legendre(l, 0.0);
    alm.ScaleL(factor);
    alm2map(alm, map);
    std::vector<double> out(grid.npix());
    for (long p = 0; p < grid.npix(); ++p) out[p] = map[static_cast<int>(p)];
    return out;
  } catch (const PlanckError& e) {
    fail("HEALPix spherical harmonics: ", e.what());
  }
}

std::vector<BandIntegral> band_radon_direct(const SphereMap& map, const std::vector<Eigen::Vector3d>& normals,
                                            double half_width) {
  const double s = std::sin(half_width);
  std::vector<long> covered;
  std::vector<Eigen::Vector3d> centres;
  for (long p = 0; p < map.grid.npix(); ++p)
    if (map.weight[p] > 0) covered.push_back(p), centres.push_back(map.grid.centre_of(p));
  std::vector<BandIntegral> out(normals.size());
#pragma omp parallel for schedule(dynamic)
  for (size_t k = 0; k < normals.size(); ++k) {
    const Eigen::Vector3d n = normals[k].normalized();
    double sum = 0, w = 0;
    for (size_t q = 0; q < covered.size(); ++q)
      if (std::abs(n.dot(centres[q])) <= s) sum += map.value(covered[q]), w += 1;
    out[k].mean = w > 0 ? sum / w : 0.0;
    out[k].weight = w * map.grid.pixel_area_sr();
  }
  return out;
}

}  // namespace orderband
