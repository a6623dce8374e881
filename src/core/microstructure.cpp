// Synthetic microstructure generation and point queries.
#include "orderband/microstructure.hpp"

#include <algorithm>
#include <cmath>
#include <random>

#include "orderband/error.hpp"
#include "orderband/units.hpp"

namespace orderband {

const char* particle_class_name(ParticleClass c) { return c == ParticleClass::primary ? "primary" : "secondary"; }

double Particle::half_depth_um() const {
  if (shape == ParticleShape::sphere) return 0.5 * diameter_um;
  const double a = diameter_um * std::cbrt(kPi / 6);  // cube of the same volume
  const Eigen::Matrix3d g = orientation.matrix();     // rows: cube axes in the sample frame
  return 0.5 * a * (std::abs(g(0, 2)) + std::abs(g(1, 2)) + std::abs(g(2, 2)));
}

bool Particle::contains(const Eigen::Vector3d& p) const {
  const Eigen::Vector3d d = p - centre_um;
  if (shape == ParticleShape::sphere) return d.squaredNorm() <= 0.25 * diameter_um * diameter_um;
  const double a = diameter_um * std::cbrt(kPi / 6);
  return (orientation.matrix() * d).cwiseAbs().maxCoeff() <= 0.5 * a;
}

double Particle::section_ecd_um() const {
  if (shape == ParticleShape::sphere) {
    const double r2 = 0.25 * diameter_um * diameter_um - centre_um.z() * centre_um.z();
    return r2 > 0 ? 2 * std::sqrt(r2) : 0.0;
  }
  // Cube: area of the section polygon by a fine raster of its bounding square.
  const double a = diameter_um * std::cbrt(kPi / 6);
  const double half = 0.5 * a * std::sqrt(3.0);
  const int n = 200;
  int inside = 0;
  for (int i = 0; i < n; ++i)
    for (int j = 0; j < n; ++j) {
      const Eigen::Vector3d p(centre_um.x() - half + (j + 0.5) * 2 * half / n,
                              centre_um.y() - half + (i + 0.5) * 2 * half / n, 0.0);
      inside += contains(p);
    }
  const double area = inside * (2 * half / n) * (2 * half / n);
  return 2 * std::sqrt(area / kPi);
}

namespace {

/// How far a particle's section can reach from its centre in the section plane: half its
/// diameter, × 1.3 for a cuboid's corners.
double section_reach_um(const Particle& p) {
  return 0.5 * p.diameter_um * (p.shape == ParticleShape::cuboid ? 1.3 : 1.0);
}

void check_spec(const MicrostructureSpec& spec) {
  if (!(spec.width_um > 0 && spec.height_um > 0)) fail("microstructure field must have a positive size");
  if (spec.grain_count < 1) fail("grain count must be at least 1, got ", spec.grain_count);
  for (const auto* c : {&spec.primary, &spec.secondary})
    if (!(c->area_fraction >= 0 && c->area_fraction < 1))
      fail("precipitate area fraction must be within [0, 1), got ", c->area_fraction);
  if (spec.primary.area_fraction + spec.secondary.area_fraction >= 0.9)
    fail("primary + secondary area fractions ", spec.primary.area_fraction + spec.secondary.area_fraction,
         " leave no matrix; keep their sum below 0.9");
  if (!(spec.tertiary_fraction >= 0 && spec.tertiary_fraction <= 1))
    fail("tertiary fraction must be within [0, 1], got ", spec.tertiary_fraction);
  if (!(spec.free_layer_um >= 0 && spec.free_layer_um < spec.height_um))
    fail("the γ′-free layer's depth must be within [0, field height ", spec.height_um, " µm), got ", spec.free_layer_um,
         " µm");
}

}  // namespace

Microstructure::Microstructure(const MicrostructureSpec& spec) : spec_(spec) {
  check_spec(spec);
  std::mt19937_64 rng(spec.seed);
  place_grains(rng);
  make_spatial_hash();
  place_primary(rng);
  place_secondary(rng);
  dissolve_in_free_layer();
}

/// The γ′-free layer: every particle that reaches into it is dissolved after the others were
/// placed as without it (removing them while placing would lose the particles whose retries after
/// an overlap landed there, and thin the population below the layer by 15 % at 25 %).
void Microstructure::dissolve_in_free_layer() {
  if (!(spec_.free_layer_um > 0)) return;
  std::vector<Particle> kept;
  for (const Particle& p : particles_)
    if (!reaches_free_layer(p)) kept.push_back(p);
  particles_.clear();
  make_spatial_hash();
  for (Particle& p : kept) {
    p.id = static_cast<int>(particles_.size()) + 1;
    particles_.push_back(p);
    index_particle(static_cast<int>(particles_.size()) - 1);
  }
}

/// Grains: Voronoi seeds over the field with a margin, so grains continue past its edges.
void Microstructure::place_grains(std::mt19937_64& rng) {
  const MicrostructureSpec& spec = spec_;
  std::uniform_real_distribution<double> u01(0, 1);
  const double W = spec.width_um, H = spec.height_um;
  const auto orientations = random_rotations(spec.grain_count, spec.seed ^ 0x9e3779b97f4a7c15ull);
  for (int g = 0; g < spec.grain_count; ++g) {
    Grain grain;
    grain.seed_um = {(-0.1 + 1.2 * u01(rng)) * W, (-0.1 + 1.2 * u01(rng)) * H};
    if (spec.texture == Texture::random) {
      grain.orientation = orientations[g];
    } else {
      const double angle = deg_to_rad(spec.texture_spread_deg) * std::abs(std::normal_distribution<double>(0, 1)(rng));
      grain.orientation = Rotation::from_axis_angle(orientations[g].axis(), angle);
    }
    grains_.push_back(grain);
  }
}

/// Cells of the spatial hash: at least the largest particle, at least 2 % of the field.
void Microstructure::make_spatial_hash() {
  const MicrostructureSpec& spec = spec_;
  const double W = spec.width_um, H = spec.height_um;
  const double max_d = std::max(spec.primary.area_fraction > 0 ? spec.primary.size.max_um() : 0.0,
                                spec.secondary.area_fraction > 0 ? spec.secondary.size.max_um() : 0.0);
  cell_um_ = std::max(max_d, 0.02 * std::max(W, H));
  cells_x_ = static_cast<int>(std::ceil((W + 2 * cell_um_) / cell_um_)) + 1;
  cells_y_ = static_cast<int>(std::ceil((H + 2 * cell_um_) / cell_um_)) + 1;
  cells_.assign(static_cast<size_t>(cells_x_) * cells_y_, {});
}

/// Primary particles on grain boundaries, sectioned near their equator (|z| ≤ D/4).
void Microstructure::place_primary(std::mt19937_64& rng) {
  const MicrostructureSpec& spec = spec_;
  std::uniform_real_distribution<double> u01(0, 1);
  const double W = spec.width_um, H = spec.height_um;
  if (!(spec.primary.area_fraction > 0)) return;
  if (spec.grain_count < 2) fail("primary particles sit on grain boundaries: give at least 2 grains");
  const auto own = random_rotations(1000, spec.seed ^ 0x51ed2705ull);  // own orientations, a sequence of their own
  const double target = spec.primary.area_fraction * W * H;
  double placed_area = 0;
  for (int attempt = 0; attempt < 20000 && placed_area < target; ++attempt) {
    Particle p;
    p.cls = ParticleClass::primary;
    p.shape = spec.primary.shape;
    p.diameter_um = spec.primary.size.sample(rng);
    // A random point moved onto the boundary between its two nearest grains.
    Eigen::Vector2d x(u01(rng) * W, u01(rng) * H);
    std::vector<std::pair<double, int>> d;
    for (int g = 0; g < spec.grain_count; ++g) d.emplace_back((grains_[g].seed_um - x).squaredNorm(), g);
    std::partial_sort(d.begin(), d.begin() + 2, d.end());
    const Eigen::Vector2d a = grains_[d[0].second].seed_um, b = grains_[d[1].second].seed_um;
    const Eigen::Vector2d n = (b - a).normalized();
    x -= ((x - 0.5 * (a + b)).dot(n)) * n;
    if (x.x() < 0 || x.x() > W || x.y() < 0 || x.y() > H) continue;
    p.host_grain = grain_at(x);
    p.centre_um = {x.x(), x.y(), (u01(rng) - 0.5) * 0.5 * p.diameter_um};
    p.own_orientation = spec.primary.own_orientation;
    p.orientation = p.own_orientation ? own[particles_.size() % own.size()] : grains_[p.host_grain].orientation;
    if (overlaps(p)) continue;
    p.id = static_cast<int>(particles_.size()) + 1;
    particles_.push_back(p);
    index_particle(static_cast<int>(particles_.size()) - 1);
    placed_area += kPi / 4 * p.section_ecd_um() * p.section_ecd_um();
  }
}

/// Secondary particles: a 3-D population of number density N_V = V_V / ⟨π D³/6⟩ in a slab
/// of thickness T = D_max around the section plane, over the field plus a margin; only
/// particles cut by the plane are kept (so larger ones are cut more often, as in a real section).
void Microstructure::place_secondary(std::mt19937_64& rng) {
  const MicrostructureSpec& spec = spec_;
  std::uniform_real_distribution<double> u01(0, 1);
  const double W = spec.width_um, H = spec.height_um;
  if (!(spec.secondary.area_fraction > 0)) return;
  const SizeDistribution& sd = spec.secondary.size;
  const double T = sd.max_um(), margin = 0.5 * T;
  const double n_v = spec.secondary.area_fraction / (kPi / 6 * sd.mean_cube_um3());
  const double volume = (W + 2 * margin) * (H + 2 * margin) * T;
  // The expected number, not a Poisson draw: the specimen's volume fraction is the target
  // (up to the sampled sizes), so that sections of it test the stereology, not the count.
  const long n = std::lround(n_v * volume);
  if (n > 5'000'000) fail("secondary particles too small for the field: ", n, " would be generated");
  for (long k = 0; k < n; ++k) {
    Particle p;
    p.cls = ParticleClass::secondary;
    p.shape = spec.secondary.shape;
    p.diameter_um = sd.sample(rng);
    const double z = (u01(rng) - 0.5) * T;
    for (int attempt = 0; attempt < 100; ++attempt) {
      const Eigen::Vector2d x(-margin + u01(rng) * (W + 2 * margin), -margin + u01(rng) * (H + 2 * margin));
      p.host_grain = grain_at(x);
      p.orientation = grains_[p.host_grain].orientation;
      p.centre_um = {x.x(), x.y(), z};
      if (std::abs(z) >= p.half_depth_um()) break;  // not cut by the section plane
      if (overlaps(p)) continue;
      p.id = static_cast<int>(particles_.size()) + 1;
      particles_.push_back(p);
      index_particle(static_cast<int>(particles_.size()) - 1);
      break;
    }
  }
}

void Microstructure::index_particle(int k) {
  const Particle& p = particles_[k];
  const double r = section_reach_um(p);
  const int x0 = static_cast<int>(std::floor((p.centre_um.x() - r + cell_um_) / cell_um_));
  const int x1 = static_cast<int>(std::floor((p.centre_um.x() + r + cell_um_) / cell_um_));
  const int y0 = static_cast<int>(std::floor((p.centre_um.y() - r + cell_um_) / cell_um_));
  const int y1 = static_cast<int>(std::floor((p.centre_um.y() + r + cell_um_) / cell_um_));
  for (int y = std::max(0, y0); y <= std::min(cells_y_ - 1, y1); ++y)
    for (int x = std::max(0, x0); x <= std::min(cells_x_ - 1, x1); ++x)
      cells_[static_cast<size_t>(y) * cells_x_ + x].push_back(k);
}

/// Whether any part of a particle lies in the γ′-free layer (within its section reach, as the
/// spatial hash takes it).
bool Microstructure::reaches_free_layer(const Particle& p) const {
  return spec_.free_layer_um > 0 && p.centre_um.y() - section_reach_um(p) < spec_.free_layer_um;
}

bool Microstructure::overlaps(const Particle& p) const {
  // Hard core: volume-equivalent spheres may not intersect.
  const int cx = static_cast<int>(std::floor((p.centre_um.x() + cell_um_) / cell_um_));
  const int cy = static_cast<int>(std::floor((p.centre_um.y() + cell_um_) / cell_um_));
  for (int y = std::max(0, cy - 1); y <= std::min(cells_y_ - 1, cy + 1); ++y)
    for (int x = std::max(0, cx - 1); x <= std::min(cells_x_ - 1, cx + 1); ++x)
      for (int k : cells_[static_cast<size_t>(y) * cells_x_ + x]) {
        const Particle& q = particles_[k];
        if ((q.centre_um - p.centre_um).norm() < 0.5 * (q.diameter_um + p.diameter_um)) return true;
      }
  return false;
}

int Microstructure::grain_at(const Eigen::Vector2d& x) const {
  int best = 0;
  double best_d = INFINITY;
  for (size_t g = 0; g < grains_.size(); ++g) {
    const double d = (grains_[g].seed_um - x).squaredNorm();
    if (d < best_d) best_d = d, best = static_cast<int>(g);
  }
  return best;
}

MicrostructureSample Microstructure::at(const Eigen::Vector2d& x) const {
  MicrostructureSample s;
  s.grain = grain_at(x);
  const int cx = static_cast<int>(std::floor((x.x() + cell_um_) / cell_um_));
  const int cy = static_cast<int>(std::floor((x.y() + cell_um_) / cell_um_));
  if (cx < 0 || cy < 0 || cx >= cells_x_ || cy >= cells_y_) return s;
  const Eigen::Vector3d p(x.x(), x.y(), 0.0);
  for (int k : cells_[static_cast<size_t>(cy) * cells_x_ + cx])
    if (particles_[k].contains(p)) {
      s.particle = k;
      break;
    }
  return s;
}

double Microstructure::ordered_at(const Eigen::Vector2d& x) const { return at(x).particle >= 0 ? 1.0 : tertiary_at(x); }

}  // namespace orderband
