// Microstructure generator: Wicksell's section law, target fractions, grain-boundary primaries.
#include "orderband/microstructure.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "orderband/error.hpp"

namespace orderband {
namespace {

TEST(Microstructure, WicksellMeanSectionOfMonodisperseSpheres) {
  // Wicksell, Biometrika 17 (1925); Underwood, Quantitative Stereology (1970): random plane
  // sections of spheres of diameter D have mean diameter πD/4 = 0.7854 D (and ⟨d²⟩ = 2D²/3).
  MicrostructureSpec spec;
  spec.width_um = spec.height_um = 18;
  spec.secondary.area_fraction = 0.15;
  spec.secondary.size = SizeDistribution::fixed(0.2);
  spec.seed = 21;
  const Microstructure m(spec);
  double s = 0, s2 = 0;
  int n = 0;
  for (const Particle& p : m.particles()) {
    const double d = p.section_ecd_um();
    if (d <= 0) continue;
    s += d, s2 += d * d, ++n;
  }
  ASSERT_GT(n, 1500);
  EXPECT_NEAR(s / n / 0.2, M_PI / 4, 0.02 * M_PI / 4);
  EXPECT_NEAR(s2 / n / 0.04, 2.0 / 3.0, 0.03 * 2.0 / 3.0);
}

TEST(Microstructure, SecondaryAreaFractionMatchesTheTarget) {
  // Delesse: A_A = V_V. Sampling error of a boolean-like field: var ≈ A(1−A)·ā/A_field,
  // ā the mean section area (here ~5e-3 µm² in 144 µm²: SD ≈ 0.003); tolerance 0.012.
  for (double target : {0.1, 0.3}) {
    MicrostructureSpec spec;
    spec.width_um = spec.height_um = 12;
    spec.grain_count = 4;
    spec.secondary.area_fraction = target;
    spec.secondary.size = SizeDistribution::lognormal(0.1, 0.25);
    spec.seed = 5;
    const Microstructure m(spec);
    int inside = 0, total = 0;
    for (int i = 0; i < 600; ++i)
      for (int j = 0; j < 600; ++j) {
        inside += m.at({(j + 0.5) * 0.02, (i + 0.5) * 0.02}).particle >= 0;
        ++total;
      }
    EXPECT_NEAR(double(inside) / total, target, 0.012) << target;
  }
}

TEST(Microstructure, PrimariesSitOnGrainBoundariesAndSecondariesAreCoherent) {
  MicrostructureSpec spec;
  spec.width_um = spec.height_um = 5;
  spec.grain_count = 5;
  spec.primary.area_fraction = 0.05;
  spec.primary.size = SizeDistribution::fixed(0.6);
  spec.primary.own_orientation = true;
  spec.secondary.area_fraction = 0.2;
  spec.secondary.size = SizeDistribution::fixed(0.1);
  spec.seed = 9;
  const Microstructure m(spec);
  int primaries = 0;
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  for (const Particle& p : m.particles()) {
    if (p.cls == ParticleClass::primary) {
      ++primaries;
      // Equidistant from the two nearest grain seeds: on their boundary.
      std::vector<double> d;
      for (const Grain& g : m.grains()) d.push_back((g.seed_um - p.centre_um.head<2>()).norm());
      std::sort(d.begin(), d.end());
      EXPECT_NEAR(d[0], d[1], 1e-9);
      EXPECT_TRUE(p.own_orientation);
    } else {
      EXPECT_LT(cubic.misorientation_angle(p.orientation, m.grains()[p.host_grain].orientation), 1e-9);
    }
  }
  EXPECT_GE(primaries, 1);
}

TEST(Microstructure, AGammaPrimeFreeLayerHoldsNoParticleAndNoTertiary) {
  // A layer 1 µm deep along y < 1 (as beneath an oxidised edge): no particle section reaches into
  // it and its matrix holds no tertiary γ′; below it, the secondary area fraction stays at its
  // target (Delesse; sampling SD about 0.004 here) and the matrix holds the tertiary fraction.
  MicrostructureSpec spec;
  spec.width_um = spec.height_um = 8;
  spec.grain_count = 3;
  spec.secondary.area_fraction = 0.25;
  spec.secondary.size = SizeDistribution::lognormal(0.12, 0.2);
  spec.tertiary_fraction = 0.05;
  spec.free_layer_um = 1.0;
  spec.seed = 9;
  const Microstructure m(spec);
  int in_layer = 0, inside = 0, total = 0;
  for (int i = 0; i < 400; ++i)
    for (int j = 0; j < 400; ++j) {
      const Eigen::Vector2d x((j + 0.5) * 0.02, (i + 0.5) * 0.02);
      const bool particle = m.at(x).particle >= 0;
      if (x.y() < 1.0) {
        in_layer += particle;
        EXPECT_EQ(m.ordered_at(x), 0.0);
      } else if (x.y() > 1.2) {
        inside += particle, ++total;
        if (!particle) {
          EXPECT_EQ(m.ordered_at(x), 0.05);
        }
      }
    }
  EXPECT_EQ(in_layer, 0);
  EXPECT_NEAR(double(inside) / total, 0.25, 0.015);
  // Below the layer's reach the microstructure is the one without it, point for point (the layer
  // dissolves what reaches into it after the particles were placed).
  MicrostructureSpec bulk = spec;
  bulk.free_layer_um = 0;
  const Microstructure without(bulk);
  int same = 0, compared = 0;
  for (int i = 70; i < 400; ++i)
    for (int j = 0; j < 400; ++j) {
      const Eigen::Vector2d x((j + 0.5) * 0.02, (i + 0.5) * 0.02);
      same += (m.at(x).particle >= 0) == (without.at(x).particle >= 0), ++compared;
    }
  EXPECT_EQ(same, compared);
  spec.free_layer_um = 8.0;  // as deep as the field: nothing left to map
  EXPECT_THROW(Microstructure{spec}, Error);
}

TEST(Microstructure, RejectsImpossibleSpecs) {
  MicrostructureSpec spec;
  spec.secondary.area_fraction = 1.2;
  EXPECT_THROW(Microstructure{spec}, Error);
  spec.secondary.area_fraction = 0.2;
  spec.tertiary_fraction = -0.1;
  EXPECT_THROW(Microstructure{spec}, Error);
  spec.tertiary_fraction = 0;
  spec.primary.area_fraction = 0.05;  // one grain: no boundary
  EXPECT_THROW(Microstructure{spec}, Error);
}

}  // namespace
}  // namespace orderband
