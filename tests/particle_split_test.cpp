#include "orderband/particle_split.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <limits>
#include <random>
#include <set>
#include <sstream>

#include "orderband/particles.hpp"
#include "test_support.hpp"

using namespace orderband;

namespace {

ScanGrid square_grid(int rows, int cols) {
  ScanGrid g;
  g.rows = rows, g.cols = cols, g.step_um = 0.025;
  return g;
}

/// Discs (centre row, col, radius in steps) of f = 1 on a matrix of 0.05, plus Gaussian noise.
std::vector<float> discs(const ScanGrid& g, const std::vector<std::array<double, 3>>& d, double noise, int seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<float> eps(0.0f, static_cast<float>(noise));
  std::vector<float> f(g.count());
  for (size_t k = 0; k < f.size(); ++k) {
    const GridPoint p = g.point(k);
    bool in = false;
    for (const auto& c : d) in = in || std::hypot(p.row - c[0], p.col - c[1]) <= c[2];
    f[k] = (in ? 1.0f : 0.05f) + eps(rng);
  }
  return f;
}

}  // namespace

TEST(ParticleSplit, MaximaDynamicsAgreeWithScikitImageHMaxima) {
  // A smoothed random field: the points whose dynamic reaches h are skimage's h-maxima.
  const ScanGrid g = square_grid(48, 64);
  const std::vector<float> f = smooth_map(g, discs(g, {}, 1.0, 5), 1.0);
  const std::string dir = test::make_temp_dir("hmax");
  std::ofstream(dir + "/in.f32", std::ios::binary).write(reinterpret_cast<const char*>(f.data()), f.size() * 4);
  const std::vector<float> dynamic = maxima_dynamics(g, f, 8);
  for (double h : {0.05, 0.2, 0.5}) {
    const auto r = test::run_reference_script("hmaxima_reference.py", dir + "/in.f32 48 64 " + std::to_string(h));
    ASSERT_EQ(r.exit_code, 0) << r.err;
    std::istringstream in(r.out);
    size_t count = 0;
    in >> count;
    std::set<size_t> reference;
    for (size_t k; in >> k;) reference.insert(k);
    std::set<size_t> mine;
    for (size_t k = 0; k < f.size(); ++k)
      if (dynamic[k] >= h) mine.insert(k);
    EXPECT_EQ(mine.size(), count) << "h = " << h;
    EXPECT_EQ(mine, reference) << "h = " << h;
    EXPECT_GT(count, 0u);
  }
  std::filesystem::remove_all(dir);
}

TEST(ParticleSplit, TouchingParticlesComeApartAndALargeOneStaysWhole) {
  // Per-point noise 0.25 as in a 5,000-count map, 20 noise draws each. Two discs of radius 3 steps
  // whose edges touch (centres 6 steps apart) threshold into one component in 19 of 20 draws;
  // split, they come apart in 19 (at least 17 asserted; 12 by the smoothed map's saddles alone:
  // where the neck is as bright as the discs there is no saddle to find, and the outline's neck
  // does the rest, split_by_shape). Half a step apart, noise bridges them now and then and
  // the split separates them in 19 of 20 (at least 18). A disc of radius 12 steps stays one particle
  // (its noisy top has no saddle below midway between the threshold and 1) in at least 19 of 20.
  const ScanGrid g = square_grid(40, 40);
  SegmentSpec spec;
  spec.min_points = 4;
  spec.noise_sd = 0.25;
  SegmentSpec plain = spec;
  plain.split_touching = false;
  int touching_split = 0, touching_merged_plain = 0, near_split = 0, large_whole = 0;
  for (int seed = 1; seed <= 20; ++seed) {
    const std::vector<float> touching = discs(g, {{{20, 17.0, 3.0}}, {{20, 23.0, 3.0}}}, 0.25, seed);
    touching_split += segment_particles(g, touching, {}, spec).particles.size() == 2;
    touching_merged_plain += segment_particles(g, touching, {}, plain).particles.size() == 1;
    const std::vector<float> near = discs(g, {{{20, 16.75, 3.0}}, {{20, 23.25, 3.0}}}, 0.25, seed);
    near_split += segment_particles(g, near, {}, spec).particles.size() == 2;
    const std::vector<float> large = discs(g, {{{20, 20, 12.0}}}, 0.25, 100 + seed);
    large_whole += segment_particles(g, large, {}, spec).particles.size() == 1;
  }
  EXPECT_GE(touching_merged_plain, 18);
  EXPECT_GE(touching_split, 17);
  EXPECT_GE(near_split, 18);
  EXPECT_GE(large_whole, 19);
}

namespace {

/// Labels 1 on the points inside any of the shapes (a point is inside a disc (row, col, radius) or
/// inside an ellipse given as a disc stretched by `stretch` along the columns), 0 elsewhere.
std::vector<int32_t> shapes(const ScanGrid& g, const std::vector<std::array<double, 3>>& d, double stretch = 1) {
  std::vector<int32_t> label(g.count(), 0);
  for (size_t k = 0; k < label.size(); ++k) {
    const Eigen::Vector2d x = g.position_um(g.point(k)) / g.step_um;
    for (const auto& c : d)
      if (std::hypot(x.y() - c[0], (x.x() - c[1]) / stretch) <= c[2]) label[k] = 1;
  }
  return label;
}

size_t parts(const std::vector<int32_t>& label) {
  return std::set<int32_t>(label.begin(), label.end()).size() - 1;  // 0 is not a part
}

}  // namespace

TEST(ParticleSplit, TouchingSectionsOfUniformFractionComeApartByTheirOutline) {
  // Sections that the map shows at a uniform fraction, with no dip between them, are one connected
  // part; their outline has a neck. Geometry by construction: two discs of radius R whose centres
  // lie 2R apart meet at a point, so the distance maximum of each (≈ R) stands about R − 1 steps
  // above the neck's saddle. On a hexagonal grid the rows meet the contact point obliquely: up to
  // R = 3 steps the discretised contact is a neck three rows thick round a one-point hole (the hole
  // counts as the part), which the rule leaves whole; from 3.5 steps it is cut.
  for (GridKind kind : {GridKind::square, GridKind::hexagonal}) {
    ScanGrid g = square_grid(30, 40);
    g.kind = kind;
    const bool square = kind == GridKind::square;
    const int conn = square ? 8 : 6;
    for (double r : square ? std::array{2.5, 3.0, 4.0} : std::array{3.5, 4.0, 5.0}) {
      const auto pair = shapes(g, {{{15, 20 - r, r}}, {{15, 20 + r, r}}});
      EXPECT_EQ(parts(split_by_shape(g, pair, 1.0, conn)), 2u)
          << "two discs of radius " << r << (kind == GridKind::square ? " (square)" : " (hexagonal)");
      // Of unequal size (radius r and r + 1).
      const auto unequal = shapes(g, {{{15, 19 - r, r + 1}}, {{15, 20 + r, r}}});
      EXPECT_EQ(parts(split_by_shape(g, unequal, 1.0, conn)), 2u) << "discs of radius " << r << ", " << r + 1;
    }
    // Three in a row.
    const double c = square ? 3 : 4;
    const auto chain = shapes(g, {{{15, 10 - 2 * c, c}}, {{15, 10, c}}, {{15, 10 + 2 * c, c}}});
    EXPECT_EQ(parts(split_by_shape(g, chain, 1.0, conn)), 3u);
    // One round or elongated body has no neck and stays whole, whatever its size on the grid.
    for (double r : {2.0, 3.0, 5.0, 8.0})
      EXPECT_EQ(parts(split_by_shape(g, shapes(g, {{{15, 20, r}}}), 1.0, conn)), 1u) << "disc of radius " << r;
    for (double r : {2.0, 3.0, 4.0})
      EXPECT_EQ(parts(split_by_shape(g, shapes(g, {{{15, 20, r}}}, 2.0), 1.0, conn)), 1u)
          << "ellipse of half axes " << 2 * r << " and " << r;
    // Parts already apart stay apart and keep their points; off: nothing changes.
    const auto apart = shapes(g, {{{8, 10, 3}}, {{22, 30, 3}}});
    const auto split = split_by_shape(g, apart, 1.0, conn);
    EXPECT_EQ(parts(split), 2u);
    for (size_t k = 0; k < apart.size(); ++k) EXPECT_EQ(split[k] > 0, apart[k] > 0);
  }
}

namespace {

/// The labelled points as one part (indices in scan order).
std::vector<size_t> points_of(const std::vector<int32_t>& label) {
  std::vector<size_t> p;
  for (size_t k = 0; k < label.size(); ++k)
    if (label[k] > 0) p.push_back(k);
  return p;
}

}  // namespace

TEST(ParticleSplit, ElongatedPartsAreCutIntoTheirSections) {
  // Two touching discs of radius 2–3 steps read as a 2:1 outline (aspect ratio about 2); with noise
  // at the threshold their neck fills in and the outline split (split_by_shape) leaves such small
  // pairs whole (on the demo's 4 h trial a quarter of the resolved sections were such pairs).
  // Geometry by construction; the sections' sizes are those of that trial.
  const ScanGrid g = square_grid(30, 40);
  const int min_points = 6;
  const size_t max_points = 400;
  for (double r : {2.0, 2.5, 3.0}) {
    const auto pair = points_of(shapes(g, {{{15, 20 - r, r}}, {{15, 20 + r, r}}}));
    const auto cut = split_elongated(g, {pair}, 1.7, min_points, max_points);
    ASSERT_EQ(cut.size(), 2u) << "radius " << r;
    // Each half is one disc: equal point counts but for a point where the discs touch, and no
    // point lost or shared.
    EXPECT_LE(std::abs(static_cast<int>(cut[0].size()) - static_cast<int>(cut[1].size())), 1) << r;
    EXPECT_EQ(cut[0].size() + cut[1].size(), pair.size()) << r;
  }
  // Three in a row come apart into three (a 3:1 outline, halves cut again).
  const auto chain = points_of(shapes(g, {{{15, 12, 2}}, {{15, 16, 2}}, {{15, 20, 2}}}));
  EXPECT_EQ(split_elongated(g, {chain}, 1.7, min_points, max_points).size(), 3u);
  // Round bodies stay whole at every size; so does a 1.5:1 ellipse (below the aspect bound).
  for (double r : {2.0, 3.0, 5.0, 8.0})
    EXPECT_EQ(split_elongated(g, {points_of(shapes(g, {{{15, 20, r}}}))}, 1.7, min_points, max_points).size(), 1u)
        << "disc of radius " << r;
  EXPECT_EQ(split_elongated(g, {points_of(shapes(g, {{{15, 20, 3}}}, 1.5))}, 1.7, min_points, max_points).size(), 1u);
  // A pair whose halves would be smaller than min_points stays whole; so does a pair larger than
  // max_points; and the bound off keeps everything.
  const auto small_pair = points_of(shapes(g, {{{15, 18.5, 1.5}}, {{15, 21.5, 1.5}}}));
  const int half = static_cast<int>(small_pair.size() / 2);
  EXPECT_EQ(split_elongated(g, {small_pair}, 1.7, half + 1, max_points).size(), 1u);
  EXPECT_EQ(split_elongated(g, {small_pair}, 1.7, half - 1, max_points).size(), 2u);
  const auto big_pair = points_of(shapes(g, {{{15, 12, 6}}, {{15, 24, 6}}}));
  EXPECT_EQ(split_elongated(g, {big_pair}, 1.7, min_points, big_pair.size() - 1).size(), 1u);
  EXPECT_EQ(split_elongated(g, {big_pair}, 1.7, min_points, big_pair.size()).size(), 2u);
  EXPECT_EQ(split_elongated(g, {chain}, std::numeric_limits<double>::infinity(), min_points, max_points).size(), 1u);
}

TEST(ParticleSplit, DistanceToOutsideAgreesWithScipyAndWithEveryPair) {
  // Random blobs (a smoothed noise field above a level) with holes and ragged edges: on a square
  // grid the distance equals scipy's exact Euclidean distance transform; on both grids it equals
  // the minimum over every point off the part, computed here pair by pair.
  const std::string dir = test::make_temp_dir("edt");
  for (GridKind kind : {GridKind::square, GridKind::hexagonal}) {
    ScanGrid g = square_grid(37, 53);
    g.kind = kind;
    const std::vector<float> f = smooth_map(g, discs(g, {}, 1.0, kind == GridKind::square ? 7 : 8), 2.0);
    std::vector<uint8_t> in(g.count());
    for (size_t k = 0; k < in.size(); ++k) in[k] = f[k] > 0.05f;  // the field's mean: about half inside
    const size_t inside = std::count(in.begin(), in.end(), 1);
    ASSERT_GT(inside, g.count() / 4);
    ASSERT_LT(inside, 3 * g.count() / 4);
    const std::vector<float> d = distance_to_outside(g, in);
    double largest = 0;
    for (size_t k = 0; k < in.size(); ++k) {
      if (!in[k]) {
        EXPECT_TRUE(std::isnan(d[k]));
        continue;
      }
      double best = std::numeric_limits<double>::infinity();
      for (size_t j = 0; j < in.size(); ++j)
        if (!in[j]) best = std::min(best, (g.position_um(g.point(j)) - g.position_um(g.point(k))).norm() / g.step_um);
      ASSERT_NEAR(d[k], best, 1e-5 * best) << k;
      largest = std::max(largest, best);
    }
    EXPECT_GT(largest, 3.0);  // the blobs hold interiors, not only edges
    if (kind != GridKind::square) continue;
    std::ofstream(dir + "/in.u8", std::ios::binary).write(reinterpret_cast<const char*>(in.data()), in.size());
    const auto r = test::run_reference_script("distance_reference.py", dir + "/in.u8 37 53");
    ASSERT_EQ(r.exit_code, 0) << r.err;
    std::istringstream out(r.out);
    for (size_t k = 0; k < in.size(); ++k) {
      double v = -1;
      out >> v;
      if (in[k]) {
        ASSERT_NEAR(d[k], v, 1e-5 * v) << k;
      }
    }
  }
  // No point off the part: infinitely far.
  const ScanGrid g = square_grid(5, 6);
  for (float v : distance_to_outside(g, std::vector<uint8_t>(g.count(), 1))) EXPECT_TRUE(std::isinf(v));
  std::filesystem::remove_all(dir);
}
