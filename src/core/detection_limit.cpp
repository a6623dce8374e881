// The detection limit of a fraction map.
#include "orderband/detection_limit.hpp"

#include <algorithm>
#include <cmath>
#include <random>
#include <vector>

#include <boost/math/quadrature/gauss.hpp>

#include "orderband/error.hpp"
#include "orderband/particles.hpp"

namespace orderband {
namespace {

double normal_cdf(double z) { return 0.5 * std::erfc(-z / std::sqrt(2.0)); }

/// The share of the beam (Gaussian σx, σy centred at (x, y)) that falls inside the disc of radius
/// r about the origin: ∫ over the disc's chords at height v of the across-profile's mass.
double beam_share_inside(double r, double x, double y, const BeamFootprint& beam) {
  auto chord = [&](double v) {
    const double c = std::sqrt(std::max(0.0, r * r - v * v));
    const double across = beam.sigma_x_um > 0
                              ? normal_cdf((c - x) / beam.sigma_x_um) - normal_cdf((-c - x) / beam.sigma_x_um)
                              : (std::abs(x) <= c ? 1.0 : 0.0);
    return across;
  };
  if (!(beam.sigma_y_um > 0)) return std::abs(y) <= r ? chord(y) : 0.0;
  auto weighted = [&](double v) {
    const double z = (v - y) / beam.sigma_y_um;
    return std::exp(-0.5 * z * z) / (beam.sigma_y_um * std::sqrt(2 * M_PI)) * chord(v);
  };
  // Only where the beam's profile along y is not negligible (it may be far narrower than the disc).
  const double a = std::max(-r, y - 8 * beam.sigma_y_um), b = std::min(r, y + 8 * beam.sigma_y_um);
  return a < b ? boost::math::quadrature::gauss<double, 40>::integrate(weighted, a, b) : 0.0;
}

}  // namespace

double expected_points_above(const ScanGrid& grid, const BeamFootprint& beam, double d, double m, double sd, double t) {
  if (!(d > 0)) return 0.0;
  sd = std::max(sd, 1e-6);
  const double r = 0.5 * d, floor = normal_cdf((m - t) / sd);
  // Midpoint raster over one quadrant (the image is symmetric in x and y), out to 5 σ past the edge.
  const double ex = r + 5 * beam.sigma_x_um, ey = r + 5 * beam.sigma_y_um;
  const int steps = 48;
  const double hx = ex / steps, hy = ey / steps;
  double sum = 0;
  for (int i = 0; i < steps; ++i)
    for (int j = 0; j < steps; ++j) {
      const double level = m + (1 - m) * beam_share_inside(r, (i + 0.5) * hx, (j + 0.5) * hy, beam);
      sum += normal_cdf((level - t) / sd) - floor;
    }
  return 4 * sum * hx * hy / (grid.step_um * grid.row_spacing_um());
}

DetectionLimit detection_limit(const ScanGrid& grid, const BeamFootprint& beam, double matrix_level, double noise_sd,
                               const DetectionLimitSpec& spec) {
  grid.validate();
  if (!(noise_sd >= 0) || !std::isfinite(noise_sd))
    fail("detection limit: the map's noise must be >= 0, got ", noise_sd);
  if (!std::isfinite(matrix_level)) fail("detection limit: the matrix level must be finite");
  if (!(spec.noise_maps >= 1)) fail("detection limit: at least one noise map is needed");
  if (!(matrix_level < spec.threshold))
    fail("detection limit: the matrix level ", matrix_level, " is not below the threshold ", spec.threshold);
  DetectionLimit lim;
  lim.noise_sd = noise_sd, lim.matrix_level = matrix_level;
  // 1. The smallest component the noise alone rarely makes: components by size over simulated maps.
  std::mt19937_64 rng(spec.seed);
  std::normal_distribution<float> noise(static_cast<float>(matrix_level), static_cast<float>(noise_sd));
  std::vector<double> at_least(grid.count() + 2, 0.0);
  SegmentSpec seg;
  seg.threshold = spec.threshold;
  seg.square_connectivity = spec.connectivity;
  seg.exclude_border = false;
  std::vector<float> f(grid.count());
  for (int map = 0; map < spec.noise_maps; ++map) {
    for (float& v : f) v = noise(rng);
    for (const Particle2D& p : segment_particles(grid, f, {}, seg).particles) at_least[p.points] += 1;
  }
  for (size_t s = grid.count(); s-- > 0;) at_least[s] += at_least[s + 1];
  lim.min_points = 1;
  while (at_least[lim.min_points] / spec.noise_maps > spec.max_false_particles) ++lim.min_points;
  lim.false_particles = at_least[lim.min_points] / spec.noise_maps;
  const double cell = grid.step_um * grid.row_spacing_um();
  lim.noise_diameter_um = 2 * std::sqrt(lim.min_points * cell / M_PI);
  // 2. The smallest section giving min_points points above the threshold on average (bisection:
  // the count grows with the diameter).
  auto points = [&](double d) { return expected_points_above(grid, beam, d, matrix_level, noise_sd, spec.threshold); };
  double lo = 0, hi = lim.noise_diameter_um;
  while (points(hi) < lim.min_points && hi < 1e3 * lim.noise_diameter_um) lo = hi, hi *= 2;
  for (int it = 0; it < 40; ++it) {
    const double mid = 0.5 * (lo + hi);
    (points(mid) < lim.min_points ? lo : hi) = mid;
  }
  lim.diameter_um = std::max(hi, lim.noise_diameter_um);
  return lim;
}

}  // namespace orderband
