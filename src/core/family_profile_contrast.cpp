// Band profiles of plane families on spheres (family_profile_contrast.hpp).
#include "orderband/family_profile_contrast.hpp"

#include <algorithm>
#include <cmath>

#include "orderband/error.hpp"

namespace orderband {

int ProfileBinning::bins() const { return static_cast<int>(std::lround(2 * max_u / width_u)); }

double ProfileBinning::centre(int bin) const { return (bin + 0.5) * width_u - max_u; }

namespace {

double sphere_mean(const SphereMap& sphere) {
  double sum = 0;
  for (long p = 0; p < sphere.grid.npix(); ++p) sum += sphere.value(p);
  return sum / static_cast<double>(sphere.grid.npix());
}

/// Mean of `values` over the bins whose centre satisfies `use` (NaN bins skipped).
template <class Use>
double mean_where(const std::vector<double>& values, const ProfileBinning& bins, Use use) {
  double sum = 0, count = 0;
  for (int b = 0; b < bins.bins(); ++b)
    if (use(std::abs(bins.centre(b))) && !std::isnan(values[b])) sum += values[b], count += 1;
  return count > 0 ? sum / count : std::nan("");
}

}  // namespace

std::vector<double> sphere_band_profile(const SphereMap& sphere, const std::vector<Eigen::Vector3d>& normals,
                                        double bragg_rad, const ProfileBinning& bins) {
  if (!(bragg_rad > 0)) fail("band profile: the Bragg angle must be positive, got ", bragg_rad);
  if (!(bins.width_u > 0 && bins.max_u > bins.width_u))
    fail("band profile: bins of width ", bins.width_u, " up to ", bins.max_u);
  const double mean = sphere_mean(sphere);
  if (!(mean > 0)) fail("band profile: the sphere has no intensity");
  // Samples along each small circle half a pixel apart.
  const int samples = static_cast<int>(std::ceil(4 * M_PI / sphere.grid.resolution_rad()));
  // Per normal, the unit vectors of its great circle; a small circle at offset α is cos α times
  // those plus sin α times the normal.
  std::vector<std::vector<Eigen::Vector3d>> circles;
  for (const Eigen::Vector3d& n : normals) {
    const Eigen::Vector3d e1 = n.unitOrthogonal(), e2 = n.cross(e1);
    std::vector<Eigen::Vector3d>& c = circles.emplace_back(samples);
    for (int k = 0; k < samples; ++k) {
      const double phi = 2 * M_PI * k / samples;
      c[k] = std::cos(phi) * e1 + std::sin(phi) * e2;
    }
  }
  const int nb = bins.bins();
  std::vector<double> profile(nb, 0.0);
  for (int b = 0; b < nb; ++b) {
    const double alpha = std::clamp(bins.centre(b) * bragg_rad, -M_PI / 2, M_PI / 2);
    double sum = 0;
    for (size_t i = 0; i < normals.size(); ++i) {
      for (const Eigen::Vector3d& on_circle : circles[i]) {
        const Eigen::Vector3d x = std::cos(alpha) * on_circle + std::sin(alpha) * normals[i];
        long pixel[4];
        double weight[4];
        sphere.grid.interpolation(x, pixel, weight);
        for (int q = 0; q < 4; ++q) sum += weight[q] * sphere.value(pixel[q]);
      }
    }
    profile[b] = sum / (static_cast<double>(samples) * static_cast<double>(normals.size())) / mean - 1;
  }
  return profile;
}

std::vector<FamilyProfileContrast> family_profile_contrasts(const SphereMap& ordered, const SphereMap& disordered,
                                                            const std::vector<PairFamily>& rows,
                                                            const ProfileBinning& bins) {
  std::vector<FamilyProfileContrast> out(rows.size());
#pragma omp parallel for schedule(dynamic)
  for (size_t i = 0; i < rows.size(); ++i) {
    std::vector<Eigen::Vector3d> normals;
    for (const CrystalDirection& n : rows[i].family.normals) normals.push_back(n.vec());
    FamilyProfileContrast& c = out[i];
    c.ordered = sphere_band_profile(ordered, normals, rows[i].bragg_ordered_rad, bins);
    c.disordered = sphere_band_profile(disordered, normals, rows[i].bragg_ordered_rad, bins);
    for (int b = 0; b < bins.bins(); ++b) c.u.push_back(bins.centre(b));
    auto interior = [](double u) { return u < 0.75; };
    auto flanks = [](double u) { return u > 1.25 && u < 2; };
    c.contrast_ordered = mean_where(c.ordered, bins, interior) - mean_where(c.ordered, bins, flanks);
    c.contrast_disordered = mean_where(c.disordered, bins, interior) - mean_where(c.disordered, bins, flanks);
    double sq = 0, count = 0;
    for (int b = 0; b < bins.bins(); ++b) {
      const double d = c.ordered[b] - c.disordered[b];
      if (std::abs(c.u[b]) < 2 && !std::isnan(d)) sq += d * d, count += 1;
    }
    c.rms_difference = count > 0 ? std::sqrt(sq / count) : std::nan("");
  }
  return out;
}

}  // namespace orderband
