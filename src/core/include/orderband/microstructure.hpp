// Synthetic γ/γ′ microstructures: Voronoi grains and precipitates in a 3-D slab sectioned by the scan plane.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <optional>
#include <random>
#include <string>
#include <vector>

#include "orderband/rotation.hpp"
#include "orderband/size_distribution.hpp"

namespace orderband {

enum class ParticleShape { sphere, cuboid };
enum class ParticleClass { primary, secondary };
enum class Texture { random, cube };

const char* particle_class_name(ParticleClass c);

struct PrecipitateClassSpec {
  double area_fraction = 0;                              ///< target area (= volume) fraction of the class
  SizeDistribution size = SizeDistribution::fixed(0.1);  ///< volume-equivalent sphere diameter (µm)
  ParticleShape shape = ParticleShape::sphere;
  bool own_orientation = false;  ///< primary only: an orientation of its own instead of the host grain's
};

struct MicrostructureSpec {
  double width_um = 1, height_um = 1;  ///< the scanned field, origin at the first point
  int grain_count = 1;
  Texture texture = Texture::random;
  double texture_spread_deg = 10;  ///< cube texture: misorientation spread (Gaussian σ of the angle)
  PrecipitateClassSpec primary;    ///< on grain boundaries, sectioned near their equator
  PrecipitateClassSpec secondary;  ///< coherent with the host grain, uniformly in the volume
  double tertiary_fraction = 0;    ///< sub-resolution ordered fraction of the γ channels
  /// Depth (µm) of a layer free of γ′ along the field's first rows (y_S below it): no particle
  /// reaches into it and it holds no tertiary γ′, as the γ′-depleted layer beneath an oxidised
  /// edge, whose aluminium the oxide took. A region known to be disordered, for reference regions.
  double free_layer_um = 0;
  std::uint64_t seed = 1;
};

struct Grain {
  Eigen::Vector2d seed_um;
  Rotation orientation;
};

struct Particle {
  int id = 0;
  ParticleClass cls = ParticleClass::secondary;
  ParticleShape shape = ParticleShape::sphere;
  Eigen::Vector3d centre_um{0, 0, 0};  ///< x_S, y_S in the field; z from the section plane (into the sample)
  double diameter_um = 0;              ///< volume-equivalent sphere diameter (3-D truth)
  int host_grain = 0;
  Rotation orientation;  ///< lattice orientation of the particle
  bool own_orientation = false;
  /// Diameter of the circle of equal area cut by the scan plane (µm).
  double section_ecd_um() const;
  /// Half-extent along z of the particle (sphere: D/2; cube: projected).
  double half_depth_um() const;
  bool contains(const Eigen::Vector3d& p_um) const;
};

/// What lies at a point of the scan plane.
struct MicrostructureSample {
  int grain = 0;
  int particle = -1;  ///< index into particles(), or −1 for the γ matrix
};

class Microstructure {
 public:
  explicit Microstructure(const MicrostructureSpec& spec);
  const MicrostructureSpec& spec() const { return spec_; }
  const std::vector<Grain>& grains() const { return grains_; }
  const std::vector<Particle>& particles() const { return particles_; }
  /// Grain (nearest seed) and particle at (x, y) µm on the section plane z = 0.
  MicrostructureSample at(const Eigen::Vector2d& p_um) const;
  int grain_at(const Eigen::Vector2d& p_um) const;
  /// Ordered fraction at a point: 1 in a particle, the tertiary fraction (tertiary_at) in the matrix.
  double ordered_at(const Eigen::Vector2d& p_um) const;
  /// Whether a point lies in the γ′-free layer (MicrostructureSpec::free_layer_um).
  bool in_free_layer(const Eigen::Vector2d& p_um) const {
    return spec_.free_layer_um > 0 && p_um.y() < spec_.free_layer_um;
  }
  /// The sub-resolution ordered fraction of the matrix at a point: 0 in the γ′-free layer.
  double tertiary_at(const Eigen::Vector2d& p_um) const { return in_free_layer(p_um) ? 0.0 : spec_.tertiary_fraction; }

 private:
  // The construction's steps, in this order on one random sequence.
  void place_grains(std::mt19937_64& rng);
  void make_spatial_hash();
  void place_primary(std::mt19937_64& rng);
  void place_secondary(std::mt19937_64& rng);
  void dissolve_in_free_layer();
  bool overlaps(const Particle& p) const;
  bool reaches_free_layer(const Particle& p) const;
  void index_particle(int k);
  MicrostructureSpec spec_;
  std::vector<Grain> grains_;
  std::vector<Particle> particles_;
  // Spatial hash of particle sections.
  double cell_um_ = 1;
  int cells_x_ = 1, cells_y_ = 1;
  std::vector<std::vector<int>> cells_;
};

}  // namespace orderband
