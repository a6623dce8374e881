// The detection limit of a fraction map.
#include "orderband/detection_limit.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <map>
#include <random>
#include <tuple>
#include <utility>
#include <vector>

#include <Eigen/Dense>
#include <boost/math/quadrature/gauss.hpp>

#include "orderband/error.hpp"
#include "orderband/particles.hpp"

namespace orderband {
namespace {

double normal_cdf(double z) { return 0.5 * std::erfc(-z / std::sqrt(2.0)); }

/// The random generator of one of several independent simulations: seeded by the run's seed and the
/// simulation's index, so that results do not depend on which thread runs which.
std::mt19937_64 generator(uint64_t seed, int index) {
  std::seed_seq seeds{static_cast<uint32_t>(seed), static_cast<uint32_t>(seed >> 32), static_cast<uint32_t>(index)};
  return std::mt19937_64(seeds);
}

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

/// One simulated section's noiseless map: isolated disc (diameter d, centre c in µm) on the patch
/// grid at level m + (1 − m)·(the beam's share inside it).
std::vector<float> section_level(const ScanGrid& patch, const BeamFootprint& beam, double d, const Eigen::Vector2d& c,
                                 double m) {
  const double r = 0.5 * d, reach_x = r + 6 * beam.sigma_x_um, reach_y = r + 6 * beam.sigma_y_um;
  std::vector<float> f(patch.count());
  for (size_t k = 0; k < patch.count(); ++k) {
    const Eigen::Vector2d x = patch.position_um(patch.point(k)) - c;
    const double share =
        std::abs(x.x()) < reach_x && std::abs(x.y()) < reach_y ? beam_share_inside(r, x.x(), x.y(), beam) : 0.0;
    f[k] = static_cast<float>(m + (1 - m) * share);
  }
  return f;
}

/// The ECD of the particle that holds most of the disc's own points (0: none found).
double found_section_ecd(const ScanGrid& patch, const Segmentation& s, const Eigen::Vector2d& c, double d) {
  std::map<int32_t, int> hits;
  const double r2 = std::max(0.25 * d * d, 0.25 * patch.step_um * patch.step_um);
  for (size_t k = 0; k < patch.count(); ++k)
    if (s.label[k] > 0 && (patch.position_um(patch.point(k)) - c).squaredNorm() <= r2) ++hits[s.label[k]];
  if (hits.empty()) return 0;
  const auto best = std::max_element(hits.begin(), hits.end(), [](auto& a, auto& b) { return a.second < b.second; });
  for (const Particle2D& p : s.particles)
    if (p.id == best->first) return p.ecd_um;
  return 0;
}

/// The transfer over diameters from 0.4 to 4 times `d_ref`: each diameter's discs at random
/// offsets within a cell of the patch centre (a new offset every kNoiseDrawsPerOffset discs),
/// segmented with `seg`.
constexpr int kNoiseDrawsPerOffset = 6;

SectionTransfer simulate_transfer(const ScanGrid& grid, const BeamFootprint& beam, double m, double sd,
                                  const SegmentSpec& seg, const DetectionLimitSpec& spec, double d_ref) {
  const int diameters = 30;
  const double d_lo = 0.4 * d_ref, d_hi = 4 * d_ref;
  ScanGrid patch = grid;
  const double reach = d_hi + 12 * std::max(beam.sigma_x_um, beam.sigma_y_um) + 6 * grid.step_um;
  patch.cols = static_cast<int>(std::ceil(reach / grid.step_um)) + 1;
  patch.rows = static_cast<int>(std::ceil(reach / grid.row_spacing_um())) + 1;
  const Eigen::Vector2d centre = patch.position_um({patch.rows / 2, patch.cols / 2});
  SectionTransfer t;
  t.true_um.resize(diameters);
  t.found.resize(diameters);
  t.measured_um.resize(diameters);
  // Each diameter draws from its own generator (seeded by the spec's seed and its index), so the
  // transfer does not depend on the number of threads.
  // Shared among processes: each simulates every P-th diameter, then they exchange them.
  const ProcessShare& share = spec.share;
#pragma omp parallel for schedule(dynamic)
  for (int i = 0; i < diameters; ++i) {
    if (i % share.processes != share.rank) continue;
    std::mt19937_64 rng = generator(spec.seed + 1, i);
    std::normal_distribution<float> noise(0.0f, static_cast<float>(sd));
    std::uniform_real_distribution<double> offset(-0.5, 0.5);
    const double d = d_lo * std::pow(d_hi / d_lo, i / double(diameters - 1));
    int found = 0;
    double sum = 0;
    // The blurred disc at a few offsets (its quadrature is the costly part), each under several
    // noise draws.
    Eigen::Vector2d c;
    std::vector<float> level, f(patch.count());
    for (int disc = 0; disc < spec.transfer_discs; ++disc) {
      if (disc % kNoiseDrawsPerOffset == 0) {
        c = centre + Eigen::Vector2d(offset(rng) * grid.step_um, offset(rng) * grid.row_spacing_um());
        level = section_level(patch, beam, d, c, m);
      }
      for (size_t k = 0; k < f.size(); ++k) f[k] = level[k] + noise(rng);
      const double ecd = found_section_ecd(patch, segment_particles(patch, f, {}, seg), c, d);
      if (ecd > 0) ++found, sum += ecd;
    }
    t.true_um[i] = d;
    t.found[i] = found / double(spec.transfer_discs);
    t.measured_um[i] = found ? sum / found : 0.0;
  }
  if (share.shared()) {
    std::vector<double> mine;
    for (int i = share.rank; i < diameters; i += share.processes)
      mine.insert(mine.end(), {t.true_um[i], t.found[i], t.measured_um[i]});
    const std::vector<std::vector<double>> all = share.all_gather_numbers(mine);
    for (int r = 0; r < share.processes; ++r)
      for (int i = r, j = 0; i < diameters && j + 2 < static_cast<int>(all[r].size()); i += share.processes, j += 3)
        t.true_um[i] = all[r][j], t.found[i] = all[r][j + 1], t.measured_um[i] = all[r][j + 2];
  }
  // Below the first found diameter the reading is undefined: carry it down; then non-decreasing.
  for (size_t i = t.measured_um.size(); i-- > 1;)
    if (t.measured_um[i - 1] <= 0) t.measured_um[i - 1] = t.measured_um[i];
  for (size_t i = 1; i < t.measured_um.size(); ++i) t.measured_um[i] = std::max(t.measured_um[i], t.measured_um[i - 1]);
  return t;
}

/// The diameter at which the share found reaches p: a logistic curve in ln d, P = 1/(1 + e^−(ln d − a)/b),
/// fitted to every simulated section (found or not) by maximum likelihood (Newton–Raphson on the
/// binomial log-likelihood), which averages the Monte Carlo noise of single diameters; where the
/// fit cannot be made (all found, or none), the first simulated diameter reaching p.
double diameter_found_with(const SectionTransfer& t, double p, int discs) {
  // Parametrised as P = σ(β0 + β1 ln d).
  Eigen::Vector2d beta(0, 0);
  bool fitted = false;
  for (int it = 0; it < 50; ++it) {
    Eigen::Matrix2d h = Eigen::Matrix2d::Zero();
    Eigen::Vector2d g = Eigen::Vector2d::Zero();
    for (size_t i = 0; i < t.true_um.size(); ++i) {
      const Eigen::Vector2d x(1, std::log(t.true_um[i]));
      const double q = 1 / (1 + std::exp(-beta.dot(x)));
      g += discs * (t.found[i] - q) * x;
      h += discs * q * (1 - q) * x * x.transpose();
    }
    if (!(h.determinant() > 1e-12)) break;
    const Eigen::Vector2d step = h.ldlt().solve(g);
    beta += step;
    if (!beta.allFinite()) break;
    if (step.norm() < 1e-10) {
      fitted = beta(1) > 0;
      break;
    }
  }
  if (fitted) return std::exp((std::log(p / (1 - p)) - beta(0)) / beta(1));
  for (size_t i = 0; i < t.found.size(); ++i)
    if (t.found[i] >= p) return t.true_um[i];
  return t.true_um.empty() ? 0.0 : t.true_um.back();
}

/// Where the mean reading starts to follow the diameter: just above the largest simulated diameter
/// below `up_to` from which the reading grows by less than half the diameter's growth. Below it
/// the reading is what the noise and the minimum component make of a section, whatever its size
/// (the minimum component's ECD and a little more), and inverting it would move readings of one
/// such size to either side of the limit at the whim of the simulation's noise.
double invertible_from(const SectionTransfer& t, double up_to) {
  double from = 0;
  for (size_t i = 0; i + 1 < t.true_um.size() && t.true_um[i] < up_to; ++i)
    if (t.measured_um[i + 1] - t.measured_um[i] < 0.5 * (t.true_um[i + 1] - t.true_um[i])) from = t.true_um[i + 1];
  return from;
}

/// The smallest component size the matrix's noise alone makes at most max_false_particles times
/// per map (simulated maps), and that rate.
std::pair<int, double> noise_component_size(const ScanGrid& grid, double m, double sd, const SegmentSpec& segment,
                                            const DetectionLimitSpec& spec) {
  std::vector<double> at_least(grid.count() + 2, 0.0);
  SegmentSpec seg = segment;
  seg.min_points = 1;
  seg.exclude_border = false;
  // Each map draws from its own generator (the spec's seed and the map's index): the counts do not
  // depend on the number of threads (they are whole numbers, so neither does their sum).
#pragma omp parallel
  {
    std::vector<double> mine(at_least.size(), 0.0);
    std::vector<float> f(grid.count());
#pragma omp for schedule(dynamic)
    for (int map = 0; map < spec.noise_maps; ++map) {
      if (map % spec.share.processes != spec.share.rank) continue;  // another process's map
      std::mt19937_64 rng = generator(spec.seed, map);
      std::normal_distribution<float> noise(static_cast<float>(m), static_cast<float>(sd));
      for (float& v : f) v = noise(rng);
      for (const Particle2D& p : segment_particles(grid, f, {}, seg).particles) mine[p.points] += 1;
    }
#pragma omp critical
    for (size_t s = 0; s < at_least.size(); ++s) at_least[s] += mine[s];
  }
  if (spec.share.shared()) {  // whole numbers: the sum does not depend on the order
    const std::vector<std::vector<double>> all = spec.share.all_gather_numbers(at_least);
    std::fill(at_least.begin(), at_least.end(), 0.0);
    for (const std::vector<double>& counts : all)
      for (size_t s = 0; s < at_least.size() && s < counts.size(); ++s) at_least[s] += counts[s];
  }
  for (size_t s = grid.count(); s-- > 0;) at_least[s] += at_least[s + 1];
  int min_points = 1;
  while (at_least[min_points] / spec.noise_maps > spec.max_false_particles) ++min_points;
  return {min_points, at_least[min_points] / spec.noise_maps};
}

}  // namespace

double SectionTransfer::reading_at(double d_um) const {
  if (true_um.empty()) return d_um;
  if (d_um <= true_um.front()) return measured_um.front() * d_um / true_um.front();
  if (d_um >= true_um.back()) return d_um + (measured_um.back() - true_um.back());
  const size_t i = std::upper_bound(true_um.begin(), true_um.end(), d_um) - true_um.begin();
  const double w = (d_um - true_um[i - 1]) / (true_um[i] - true_um[i - 1]);
  return measured_um[i - 1] + w * (measured_um[i] - measured_um[i - 1]);
}

double SectionTransfer::corrected(double ecd_um) const {
  if (true_um.empty() || !(measured_um.front() > 0)) return ecd_um;
  if (ecd_um >= measured_um.back()) return ecd_um - (measured_um.back() - true_um.back());
  // Below the reading at from_um the curve is flat (small sections read what the noise makes of
  // them) and its inverse would scatter readings over a wide range of diameters: proportional.
  const double from = std::max(from_um, true_um.front()), floor = reading_at(from);
  if (ecd_um <= floor) return ecd_um * from / floor;
  const size_t i = std::upper_bound(measured_um.begin(), measured_um.end(), ecd_um) - measured_um.begin();
  const double span = measured_um[i] - measured_um[i - 1];
  const double w = span > 0 ? (ecd_um - measured_um[i - 1]) / span : 0.0;
  return true_um[i - 1] + w * (true_um[i] - true_um[i - 1]);
}

void correct_section_diameters(const SectionTransfer& transfer, Segmentation& seg) {
  for (Particle2D& p : seg.particles) {
    p.section_diameter_um = transfer.corrected(p.ecd_um);
    p.class_diameter_um = transfer.corrected(p.class_diameter_um);
  }
}

double expected_points_above(const ScanGrid& grid, const BeamFootprint& beam, double d, double m, double sd, double t) {
  if (!(d > 0)) return 0.0;
  sd = std::max(sd, 1e-6);
  const double r = 0.5 * d, floor = normal_cdf((m - t) / sd);
  // Midpoint raster over one quadrant (the image is symmetric in x and y), out to 5 σ past the edge.
  const double ex = r + 5 * beam.sigma_x_um, ey = r + 5 * beam.sigma_y_um;
  constexpr int steps = 48;
  const double hx = ex / steps, hy = ey / steps;
  // Row sums in parallel, added in order: the same sum whatever the number of threads.
  std::array<double, steps> row{};
#pragma omp parallel for schedule(static)
  for (int i = 0; i < steps; ++i)
    for (int j = 0; j < steps; ++j) {
      const double level = m + (1 - m) * beam_share_inside(r, (i + 0.5) * hx, (j + 0.5) * hy, beam);
      row[i] += normal_cdf((level - t) / sd) - floor;
    }
  double sum = 0;
  for (double v : row) sum += v;
  return 4 * sum * hx * hy / (grid.step_um * grid.row_spacing_um());
}

DetectionLimit detection_limit(const ScanGrid& grid, const BeamFootprint& beam, double matrix_level, double noise_sd,
                               const DetectionLimitSpec& spec) {
  grid.validate();
  if (!(noise_sd >= 0) || !std::isfinite(noise_sd))
    fail("detection limit: the map's noise must be >= 0, got ", noise_sd);
  if (!std::isfinite(matrix_level)) fail("detection limit: the matrix level must be finite");
  if (!(spec.noise_maps >= 1)) fail("detection limit: at least one noise map is needed");
  if (!(spec.transfer_discs >= 1)) fail("detection limit: at least one simulated section per diameter is needed");
  if (!(spec.detection_probability > 0 && spec.detection_probability < 1))
    fail("detection limit: the detection probability must be within (0, 1), got ", spec.detection_probability);
  const double threshold = spec.segment.threshold;
  if (!(matrix_level < threshold))
    fail("detection limit: the matrix level ", matrix_level, " is not below the threshold ", threshold);
  DetectionLimit lim;
  lim.noise_sd = noise_sd, lim.matrix_level = matrix_level, lim.detection_probability = spec.detection_probability;
  // 1. The smallest component the noise alone rarely makes: components by size over simulated maps.
  std::tie(lim.min_points, lim.false_particles) =
      noise_component_size(grid, matrix_level, noise_sd, spec.segment, spec);
  const double cell = grid.step_um * grid.row_spacing_um();
  lim.noise_diameter_um = 2 * std::sqrt(lim.min_points * cell / M_PI);
  // 2. The section giving min_points points above the threshold on average (bisection: the count
  // grows with the diameter): about half of such sections are found. It scales the transfer.
  auto points = [&](double d) { return expected_points_above(grid, beam, d, matrix_level, noise_sd, threshold); };
  double lo = 0, hi = lim.noise_diameter_um;
  while (points(hi) < lim.min_points && hi < 1e3 * lim.noise_diameter_um) lo = hi, hi *= 2;
  for (int it = 0; it < 40; ++it) {
    const double mid = 0.5 * (lo + hi);
    (points(mid) < lim.min_points ? lo : hi) = mid;
  }
  // 3. The transfer: sections of known diameter through the map's blur, noise and segmentation.
  SegmentSpec seg = spec.segment;
  seg.min_points = lim.min_points, seg.noise_sd = noise_sd, seg.exclude_border = false;
  lim.transfer = simulate_transfer(grid, beam, matrix_level, noise_sd, seg, spec, std::max(hi, lim.noise_diameter_um));
  lim.half_found_um = diameter_found_with(lim.transfer, 0.5, spec.transfer_discs);
  lim.diameter_um = std::max(diameter_found_with(lim.transfer, spec.detection_probability, spec.transfer_discs),
                             lim.noise_diameter_um);
  lim.transfer.from_um = std::max(lim.diameter_um, invertible_from(lim.transfer, 2 * lim.diameter_um));
  return lim;
}

}  // namespace orderband
