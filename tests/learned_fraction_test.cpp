// The learned estimator's parts on planted data: the spatial direction against numpy, and the
// direction it finds against the planted phase contrast.
#include "orderband/learned_fraction.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>

#include "test_support.hpp"

namespace orderband {
namespace {

/// A 36 × 36 scan of two grains (left and right halves) with discs of the ordered phase (radius 3
/// steps, about a quarter of the area) and a 12-feature profile per point: each grain's own base,
/// the planted ordering difference times the point's fraction, and independent noise whose spread
/// differs fivefold between features. The right grain does not cover feature 3.
struct Planted {
  LearnedInputs in;
  std::vector<double> fraction;
  std::vector<double> difference;
};

Planted planted_scan(unsigned seed, double contrast = 0.6) {
  const int rows = 36, cols = 36;
  const size_t n = rows * cols, p = 12;
  std::mt19937 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  std::uniform_real_distribution<double> uniform(0.0, 1.0);
  Planted s;
  s.fraction.assign(n, 0.0);
  for (int d = 0; d < 22; ++d) {
    const double r0 = rows * uniform(rng), c0 = cols * uniform(rng);
    for (size_t k = 0; k < n; ++k)
      if (std::hypot(static_cast<double>(k / cols) - r0, static_cast<double>(k % cols) - c0) <= 3.0)
        s.fraction[k] = 1.0;
  }
  for (size_t b = 0; b < p; ++b) s.difference.push_back(std::sin(0.9 * b + 0.3));
  LearnedInputs& in = s.in;
  in.points = n, in.features = p, in.grains = 2, in.cols = cols;
  in.grain.assign(n, 0), in.fold.assign(n, 0), in.boundary.assign(n, 0), in.first_guess.assign(n, 0.0);
  in.x.assign(n * p, 0.0f);
  for (size_t k = 0; k < n; ++k) {
    const int col = static_cast<int>(k % cols);
    in.grain[k] = col < cols / 2 ? 1 : 2;
    in.boundary[k] = col == cols / 2 - 1 || col == cols / 2;
    in.fold[k] = static_cast<uint8_t>((k / cols / 4 + col / 4) % 2);
    for (size_t b = 0; b < p; ++b) {
      const double base = in.grain[k] == 1 ? 10.0 + b : 12.0 - 0.5 * b;
      const double sd = 0.3 + 0.12 * b;
      in.x[k * p + b] = static_cast<float>(base + contrast * s.fraction[k] * s.difference[b] + sd * normal(rng));
    }
    if (in.grain[k] == 2) in.x[k * p + 3] = std::nanf("");
  }
  return s;
}

TEST(SpatialDirection, MatchesNumpysEigensolverOnTheSameDefinition) {
  const Planted s = planted_scan(5);
  const LearnedInputs& in = s.in;
  const std::vector<double> mine = spatial_direction_scores(in, grain_features(in));
  ASSERT_EQ(mine.size(), in.points);
  const std::string dir = test::make_temp_dir("lagdir");
  std::ofstream(dir + "/x.f32", std::ios::binary).write(reinterpret_cast<const char*>(in.x.data()), in.x.size() * 4);
  std::ofstream(dir + "/g.i32", std::ios::binary)
      .write(reinterpret_cast<const char*>(in.grain.data()), in.grain.size() * 4);
  std::ofstream(dir + "/b.u8", std::ios::binary)
      .write(reinterpret_cast<const char*>(in.boundary.data()), in.boundary.size());
  const auto r = test::run_reference_script("lag_direction_reference.py",
                                            dir + "/x.f32 " + dir + "/g.i32 " + dir + "/b.u8 36 36 12");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::istringstream text(r.out);
  std::vector<double> reference;
  for (std::string v; text >> v;) reference.push_back(std::stod(v));
  ASSERT_EQ(reference.size(), in.points);
  // Same direction up to its sign, to float precision of the inputs.
  double dot = 0;
  for (size_t k = 0; k < in.points; ++k) dot += mine[k] * reference[k];
  const double sign = dot >= 0 ? 1.0 : -1.0;
  double worst = 0, scale = 0;
  for (size_t k = 0; k < in.points; ++k)
    worst = std::max(worst, std::abs(mine[k] - sign * reference[k])), scale = std::max(scale, std::abs(reference[k]));
  EXPECT_LT(worst, 1e-6 * scale);
  std::filesystem::remove_all(dir);
}

/// d′ of `score` between the points of fraction 1 and 0 (points away from grain boundaries), each
/// grain's mean removed first, in the sign that makes it positive.
double planted_dprime(const Planted& s, const std::vector<double>& score) {
  double m[2][3] = {{0, 0, 0}, {0, 0, 0}}, v[2][3] = {{0, 0, 0}, {0, 0, 0}}, c[2][3] = {{0, 0, 0}, {0, 0, 0}};
  for (size_t k = 0; k < s.in.points; ++k)
    if (!s.in.boundary[k]) {
      const int f = s.fraction[k] > 0.5, g = s.in.grain[k];
      m[f][g] += score[k], v[f][g] += score[k] * score[k], c[f][g] += 1;
    }
  double d = 0, w = 0;
  for (int g = 1; g <= 2; ++g) {
    double mean[2], var[2];
    for (int f = 0; f < 2; ++f) mean[f] = m[f][g] / c[f][g], var[f] = v[f][g] / c[f][g] - mean[f] * mean[f];
    d += c[1][g] * (mean[1] - mean[0]) / std::sqrt(0.5 * (var[0] + var[1])), w += c[1][g];
  }
  return std::abs(d / w);
}

TEST(SpatialDirection, FindsThePlantedPhaseContrastWithoutBeingToldIt) {
  // The planted contrast is 0.6 × a unit-scale profile against noise of 0.3–1.6 per feature. The
  // matched filter that knows it (Σ⁻¹Δ over the features each grain covers) separates the phases
  // at d′ ≈ 2.0 per point. Noise is independent between neighbours and the discs span several
  // points, so the leading lag direction is the planted one: its scores reach ≥ 95 % of the matched
  // filter's d′ in each of five draws (measured 99–101 %).
  for (unsigned seed = 1; seed <= 5; ++seed) {
    const Planted s = planted_scan(seed);
    const std::vector<double> found = spatial_direction_scores(s.in, grain_features(s.in));
    std::vector<double> matched(s.in.points, 0.0);
    for (size_t k = 0; k < s.in.points; ++k)
      for (size_t b = 0; b < s.in.features; ++b)
        if (const float x = s.in.x[k * s.in.features + b]; !std::isnan(x))
          matched[k] += s.difference[b] / std::pow(0.3 + 0.12 * b, 2) * x;
    const double best = planted_dprime(s, matched), mine = planted_dprime(s, found);
    EXPECT_GT(best, 1.5) << "seed " << seed;
    EXPECT_GE(mine, 0.95 * best) << "seed " << seed << ": " << mine << " against " << best;
  }
}

TEST(SpatialDirection, NoNeighboursKnownGivesNoDirection) {
  Planted s = planted_scan(1);
  s.in.cols = 0;
  EXPECT_TRUE(spatial_direction_scores(s.in, grain_features(s.in)).empty());
}

/// The planted scan with a third grain in the right half: a disc of radius 7 steps holding the
/// ordered phase alone, with its own base (a primary particle with its own orientation). Three
/// families of four bins: the first a superlattice family (its difference is the ordering
/// signature), the others fundamental. The model's profiles are the planted ones at half the data's
/// scale and offset by one (only the change between grains' orientations and the signature's shape
/// enter; intensities are not trusted). Grain 2's particles carry `right_contrast` instead of
/// `contrast` (fainter where the beam or the band shapes weaken them).
Planted planted_with_primary(double contrast, double right_contrast, unsigned seed = 3) {
  Planted s = planted_scan(seed, contrast);
  LearnedInputs& in = s.in;
  const size_t p = in.features, bins = 4;
  const int cols = in.cols;
  in.grains = 3, in.bins = bins, in.superlattice_families = 1;
  auto base = [&](int g, size_t b) { return g == 1 ? 10.0 + b : g == 2 ? 12.0 - 0.5 * b : 9.0 + 0.3 * b * b; };
  std::mt19937 rng(11);
  std::normal_distribution<double> normal(0.0, 1.0);
  for (size_t k = 0; k < in.points; ++k) {
    const int row = static_cast<int>(k / cols), col = static_cast<int>(k % cols);
    if (std::hypot(row - 18.0, col - 27.0) > 7.0) {
      if (in.grain[k] == 2)
        for (size_t b = 0; b < p; ++b)
          in.x[k * p + b] += static_cast<float>((right_contrast - contrast) * s.fraction[k] * s.difference[b]);
      continue;
    }
    in.grain[k] = 3, s.fraction[k] = 1.0;
    for (size_t b = 0; b < p; ++b)
      in.x[k * p + b] = static_cast<float>(base(3, b) + contrast * s.difference[b] + (0.3 + 0.12 * b) * normal(rng));
  }
  for (size_t k = 0; k < in.points; ++k) {
    in.boundary[k] = 0;
    const int row = static_cast<int>(k / cols), col = static_cast<int>(k % cols);
    for (int dr = -1; dr <= 1; ++dr)
      for (int dc = -1; dc <= 1; ++dc) {
        const int r = row + dr, c = col + dc;
        if (r >= 0 && r < cols && c >= 0 && c < cols && in.grain[static_cast<size_t>(r * cols + c)] != in.grain[k])
          in.boundary[k] = 1;
      }
  }
  in.model.assign(4, {});
  in.ordering_signature.assign(4, std::vector<double>(p, 0.0));
  for (int g = 1; g <= 3; ++g) {
    for (int phase = 0; phase < 2; ++phase) {
      in.model[g][phase].assign(p, 0.0);
      for (size_t b = 0; b < p; ++b)
        in.model[g][phase][b] = 0.5 * (base(g, b) + (phase ? contrast * s.difference[b] : 0.0)) - 1.0;
    }
    double mean = 0;
    for (size_t b = 0; b < bins; ++b) mean += 0.3 * s.difference[b] / bins;
    for (size_t b = 0; b < bins; ++b) in.ordering_signature[g][b] = 0.3 * s.difference[b] - mean;
  }
  for (size_t k = 0; k < in.points; ++k) {
    in.first_guess[k] = 0;
    if (in.grain[k] == 2) in.x[k * p + 3] = std::nanf("");
  }
  return s;
}

/// Per grain (1..3) and true class (0 matrix, 1 ordered): the mean f over points away from grain
/// boundaries; and the area fraction less the truth.
struct PlantedMeans {
  double mean[4][2] = {};
  double area_error = 0;
};

PlantedMeans planted_means(const Planted& s, const LearnedFraction& lf) {
  double sum[4][2] = {}, count[4][2] = {}, area = 0, truth = 0, measured = 0;
  for (size_t k = 0; k < s.in.points; ++k) {
    if (std::isnan(lf.f[k])) continue;
    area += lf.f[k], truth += s.fraction[k], measured += 1;
    if (s.in.boundary[k]) continue;
    const int c = s.fraction[k] > 0.5;
    sum[s.in.grain[k]][c] += lf.f[k], count[s.in.grain[k]][c] += 1;
  }
  PlantedMeans m;
  for (int g = 1; g <= 3; ++g)
    for (int c = 0; c < 2; ++c) m.mean[g][c] = count[g][c] > 0 ? sum[g][c] / count[g][c] : std::nan("");
  m.area_error = (area - truth) / measured;
  return m;
}

TEST(LearnedFraction, PlacesPlantedPhasesAndFindsAGrainOfTheOrderedPhaseAlone) {
  // The learner, told nothing of the fractions, must find two phases, take the disc for ordered
  // alone (its mean f near 1), put the discs of the two-phase grains near 1 and their matrix near
  // 0, and the area fraction within 0.02 of the truth. Measured: disc 1.000; matrix 0.024 and
  // 0.046, discs 0.94 and 0.97; area −0.001.
  const double contrast = 1.2;  // d′ ≈ 4 per point, as one 60 × 60 px pattern gives
  const Planted s = planted_with_primary(contrast, contrast);
  const LearnedFraction lf = learn_fraction(s.in);
  EXPECT_TRUE(lf.two_phases) << lf.evidence << " " << lf.separation;
  const PlantedMeans m = planted_means(s, lf);
  EXPECT_NEAR(m.mean[3][1], 1.0, 0.05);
  for (int g = 1; g <= 2; ++g) {
    EXPECT_NEAR(m.mean[g][0], 0.0, 0.08) << "grain " << g;
    EXPECT_NEAR(m.mean[g][1], 1.0, 0.1) << "grain " << g;
  }
  EXPECT_NEAR(m.area_error, 0.0, 0.02);
}

/// planted_scan's discs seen through a footprint stretched along the columns of points (a
/// Gaussian of σ 1.2 steps along a column, as on a 70° sample at a step of a third of the beam's
/// long axis): each point's features mix its neighbours' phases by the footprint's weights.
Planted planted_under_long_footprint(unsigned seed) {
  Planted s = planted_with_primary(1.2, 1.2, seed);
  LearnedInputs& in = s.in;
  const int cols = in.cols, rows = static_cast<int>(in.points / cols);
  const size_t p = in.features;
  std::vector<double> mixed(in.points, 0.0);
  for (size_t k = 0; k < in.points; ++k) {
    const int r = static_cast<int>(k / cols), c = static_cast<int>(k % cols);
    double w = 0, m = 0;
    for (int dr = -4; dr <= 4; ++dr) {
      if (r + dr < 0 || r + dr >= rows) continue;
      const double weight = std::exp(-0.5 * dr * dr / (1.2 * 1.2));
      w += weight, m += weight * s.fraction[static_cast<size_t>(r + dr) * cols + c];
    }
    mixed[k] = m / w;
  }
  for (size_t k = 0; k < in.points; ++k)
    for (size_t b = 0; b < p; ++b)
      if (!std::isnan(in.x[k * p + b]) && in.grain[k] != 3) {
        in.x[k * p + b] += static_cast<float>(1.2 * (mixed[k] - s.fraction[k]) * s.difference[b]);
      }
  for (size_t k = 0; k < in.points; ++k)
    if (in.grain[k] == 3) mixed[k] = 1.0;
  s.fraction = mixed;
  return s;
}

TEST(LearnedFraction, MatrixZeroHoldsUnderALongFootprint) {
  // Under a footprint 2.9 times longer along the tilt most matrix points see a little of a
  // particle; a mixture's matrix component then sits above the pure matrix. The zero is taken from
  // the points with no more ordered neighbours within the beam's reach (2 σ: 3 points along a
  // column, 20 neighbours, which the scan description gives) than the noise alone makes read
  // ordered in half the pure neighbourhoods. Measured over seeds 5–10: pure matrix of the scan
  // −0.007 to +0.006 (from the mixture's matrix component alone, before: −0.019 to −0.058);
  // each two-phase grain's pure matrix within 0.039 (0.048 while no ordered neighbour was
  // tolerated); area error −0.000 to 0.035: the scale still comes from an ordered component that
  // the footprint pulls down. The grain of the ordered phase alone reads 1.000 away from its
  // boundary (0.939 to 0.966 while its zero did not follow the scale's last step).
  for (unsigned seed : {5u, 6u, 7u, 8u, 9u, 10u}) {
    Planted s = planted_under_long_footprint(seed);
    s.in.reach_rows = 3;
    const LearnedFraction lf = learn_fraction(s.in);
    ASSERT_TRUE(lf.two_phases) << seed;
    double sum[3] = {}, count[3] = {}, area = 0, truth = 0, measured = 0, alone = 0, alone_count = 0;
    for (size_t k = 0; k < s.in.points; ++k) {
      if (std::isnan(lf.f[k])) continue;
      area += lf.f[k], truth += s.fraction[k], measured += 1;
      const int g = s.in.grain[k];
      if (!s.in.boundary[k] && g <= 2 && s.fraction[k] < 0.005) sum[g] += lf.f[k], count[g] += 1;
      if (!s.in.boundary[k] && g == 3) alone += lf.f[k], alone_count += 1;
    }
    ASSERT_GT(count[1] + count[2], 100) << seed;
    EXPECT_NEAR((sum[1] + sum[2]) / (count[1] + count[2]), 0.0, 0.015) << seed;
    for (int g = 1; g <= 2; ++g) EXPECT_NEAR(sum[g] / count[g], 0.0, 0.045) << seed << " grain " << g;
    EXPECT_NEAR(alone / alone_count, 1.0, 0.01) << seed;
    EXPECT_NEAR((area - truth) / measured, 0.0, 0.042) << seed;
  }
}

}  // namespace
}  // namespace orderband
