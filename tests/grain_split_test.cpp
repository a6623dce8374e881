// Grain segmentation: two grains chained through in-between boundary orientations are split;
// a grain with a smooth orientation gradient stays whole.
#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <set>

#include "orderband/grains.hpp"
#include "orderband/units.hpp"

namespace orderband {
namespace {

const Rotation kBase = Rotation::from_bunge(deg_to_rad(20), deg_to_rad(35), deg_to_rad(10));

Rotation turned(double deg, const Eigen::Vector3d& axis = Eigen::Vector3d(1, 2, 3).normalized()) {
  return Rotation::from_axis_angle(axis, deg_to_rad(deg)) * kBase;
}

/// A 30 × 30 scan: a disc (radius 6 points) turned 6.1° from the surrounding grain, as a primary
/// particle with its own orientation, with a one-point rim of orientations halfway between (as
/// beam-mixed patterns at the boundary give). Orientation noise 0.1°.
std::vector<std::optional<Rotation>> chained_disc(const ScanGrid& grid, std::vector<int>& in_disc) {
  std::mt19937_64 rng(7);
  std::normal_distribution<double> noise(0, 0.1);
  std::vector<std::optional<Rotation>> ori(grid.count());
  in_disc.assign(grid.count(), 0);
  for (size_t k = 0; k < grid.count(); ++k) {
    const GridPoint p = grid.point(k);
    const double r = std::hypot(p.row - 15.0, p.col - 15.0);
    const double angle = r < 6 ? 6.1 : r < 7 ? 3.05 : 0.0;
    in_disc[k] = r < 6;
    const Eigen::Vector3d jitter(noise(rng), noise(rng), noise(rng));
    ori[k] = Rotation::from_axis_angle(jitter.normalized(), deg_to_rad(jitter.norm())) * turned(angle);
  }
  return ori;
}

TEST(GrainSegmentation, SplitsTwoGrainsChainedThroughInBetweenBoundaryPoints) {
  const ScanGrid grid{GridKind::square, 30, 30, 0.05};
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  std::vector<int> in_disc;
  const auto ori = chained_disc(grid, in_disc);

  GrainSpec flood_only;
  flood_only.split_bimodal = false;
  EXPECT_EQ(segment_grains(grid, ori, cubic, flood_only).count(), 1);  // the chain: 3.05° steps < 5°

  const GrainMap grains = segment_grains(grid, ori, cubic);
  ASSERT_EQ(grains.count(), 2);
  // Every disc point in one grain, every point beyond the rim in the other.
  std::set<int> disc_ids, outside_ids;
  for (size_t k = 0; k < grid.count(); ++k) {
    const GridPoint p = grid.point(k);
    const double r = std::hypot(p.row - 15.0, p.col - 15.0);
    if (in_disc[k])
      disc_ids.insert(grains.id[k]);
    else if (r >= 7)
      outside_ids.insert(grains.id[k]);
  }
  ASSERT_EQ(disc_ids.size(), 1u);
  ASSERT_EQ(outside_ids.size(), 1u);
  EXPECT_NE(*disc_ids.begin(), *outside_ids.begin());
  const int disc = *disc_ids.begin();
  const int outside = *outside_ids.begin();
  // The rim's in-between points go to either side and pull each mean towards the other by up to
  // about 0.5°; the means stay further apart than the 5° threshold.
  const double apart = rad_to_deg(cubic.misorientation_angle(grains.mean[disc - 1], grains.mean[outside - 1]));
  EXPECT_GT(apart, 5.0);
  EXPECT_LT(apart, 6.2);
}

TEST(GrainSegmentation, KeepsAGrainWithASmoothGradientWhole) {
  // 12° turned uniformly across 30 columns: 0.4° per step, far over the threshold end to end.
  const ScanGrid grid{GridKind::square, 20, 30, 0.05};
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  std::mt19937_64 rng(3);
  std::normal_distribution<double> noise(0, 0.1);
  std::vector<std::optional<Rotation>> ori(grid.count());
  for (size_t k = 0; k < grid.count(); ++k) {
    const Eigen::Vector3d jitter(noise(rng), noise(rng), noise(rng));
    ori[k] = Rotation::from_axis_angle(jitter.normalized(), deg_to_rad(jitter.norm())) *
             turned(0.4 * grid.point(k).col, Eigen::Vector3d::UnitZ());
  }
  EXPECT_EQ(segment_grains(grid, ori, cubic).count(), 1);
}

TEST(GrainSegmentation, KeepsTwoSeparateGrainsAsTheyAre) {
  // Two grains 20° apart meeting at a straight boundary: the flood fill already separates them,
  // and neither is bimodal.
  const ScanGrid grid{GridKind::square, 20, 20, 0.05};
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  std::vector<std::optional<Rotation>> ori(grid.count());
  for (size_t k = 0; k < grid.count(); ++k) ori[k] = grid.point(k).col < 8 ? kBase : turned(20);
  const GrainMap grains = segment_grains(grid, ori, cubic);
  ASSERT_EQ(grains.count(), 2);
  EXPECT_EQ(grains.size[0] + grains.size[1], 400);
  EXPECT_EQ(std::min(grains.size[0], grains.size[1]), 160);
}

}  // namespace
}  // namespace orderband
