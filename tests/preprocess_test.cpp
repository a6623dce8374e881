// Preprocessing: FFT Gaussian against scipy, background removal, mask, hot pixels, neighbour averaging.
#include "orderband/preprocess.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <random>

#include "orderband/error.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

std::vector<float> random_image(int w, int h, unsigned seed) {
  std::mt19937 rng(seed);
  std::uniform_real_distribution<float> u(0.0f, 1000.0f);
  std::vector<float> img(static_cast<size_t>(w) * h);
  for (auto& v : img) v = u(rng);
  return img;
}

TEST(GaussianBlur, MatchesScipyGaussianFilterReflectMode) {
  // scipy.ndimage.gaussian_filter(mode="reflect", truncate=4.0) through tests/reference/gaussian_reference.py.
  const std::string dir = test::make_temp_dir("blur");
  for (const auto& [w, h, sigma] : {std::tuple{60, 60, 6.0}, {37, 23, 1.5}, {40, 30, 25.0}}) {
    const auto img = random_image(w, h, 3);
    std::ofstream(dir + "/in.f32", std::ios::binary).write(reinterpret_cast<const char*>(img.data()), img.size() * 4);
    const auto r =
        test::run_reference_script("gaussian_reference.py", dir + "/in.f32 " + dir + "/out.f64 " + std::to_string(h) +
                                                                " " + std::to_string(w) + " " + std::to_string(sigma));
    ASSERT_EQ(r.exit_code, 0) << r.err;
    std::vector<double> ref(img.size());
    std::ifstream(dir + "/out.f64", std::ios::binary).read(reinterpret_cast<char*>(ref.data()), ref.size() * 8);
    std::vector<float> mine(img.size());
    GaussianBlur(w, h, sigma).apply(img.data(), mine.data());
    double worst = 0;
    for (size_t q = 0; q < img.size(); ++q) worst = std::max(worst, std::abs(mine[q] - ref[q]) / std::abs(ref[q]));
    EXPECT_LT(worst, 1e-4) << w << "x" << h << " sigma " << sigma;
  }
  std::filesystem::remove_all(dir);
}

TEST(Preprocess, RemovesMultiplicativeBackgroundsAndNormalises) {
  const int w = 60, h = 60;
  std::vector<float> band(w * h), static_bg(w * h), pattern(w * h);
  for (int i = 0; i < h; ++i)
    for (int j = 0; j < w; ++j) {
      const size_t q = static_cast<size_t>(i) * w + j;
      band[q] = std::abs(j - 0.7 * i - 12) < 3 ? 1.0f : 0.0f;  // a straight band
      static_bg[q] =
          500 + 400 * std::exp(-((i - 40.0) * (i - 40) + (j - 25.0) * (j - 25)) / 800);  // detector vignetting
      const double dyn = 1.0 + 0.3 * std::sin(0.01 * i);  // this point's own smooth variation
      pattern[q] = static_cast<float>(static_bg[q] * dyn * (1 + 0.08 * band[q]));
    }
  PreprocessSpec spec;
  spec.static_background = StaticBackgroundKind::file;  // given directly below
  spec.dynamic_background_sigma_px = 6;
  const Preprocessor pre(spec, w, h, static_bg);
  ASSERT_TRUE(pre.apply(pattern.data()));
  // Inside the mask: zero mean, unit variance.
  double s = 0, s2 = 0;
  size_t n = 0;
  for (size_t q = 0; q < pattern.size(); ++q) {
    if (!pre.mask()[q]) {
      EXPECT_EQ(pattern[q], 0.0f);
      continue;
    }
    s += pattern[q], s2 += pattern[q] * pattern[q];
    ++n;
  }
  EXPECT_NEAR(s / n, 0, 1e-5);
  EXPECT_NEAR(s2 / n, 1, 1e-4);
  // Both backgrounds are gone: the result equals the clean pattern (1 + 0.08 band) after the
  // same dynamic step, up to the smooth factor's curvature within the blur.
  std::vector<float> clean(w * h);
  for (size_t q = 0; q < clean.size(); ++q) clean[q] = 1 + 0.08f * band[q];
  PreprocessSpec clean_spec = spec;
  clean_spec.static_background = StaticBackgroundKind::none;
  ASSERT_TRUE(Preprocessor(clean_spec, w, h).apply(clean.data()));
  double dot = 0;
  for (size_t q = 0; q < clean.size(); ++q) dot += pre.mask()[q] ? pattern[q] * clean[q] : 0.0;
  EXPECT_GT(dot / n, 0.99);  // correlation of two standardised images
  // The circular mask keeps the inscribed circle: about π r² pixels.
  EXPECT_NEAR(static_cast<double>(pre.mask_count()), M_PI * 30 * 30, 0.02 * M_PI * 30 * 30);
}

TEST(Preprocess, DeadPatternsAreUnusableNotACrash) {
  PreprocessSpec spec;
  spec.static_background = StaticBackgroundKind::none;
  const Preprocessor pre(spec, 40, 40);
  std::vector<float> dead(1600, 123.0f), zero(1600, 0.0f);
  EXPECT_FALSE(pre.apply(dead.data()));
  EXPECT_FALSE(pre.apply(zero.data()));
  for (float v : dead) EXPECT_EQ(v, 0.0f);
}

TEST(Preprocess, HotPixelReplacedByItsNeighbourhoodMedian) {
  auto img = random_image(30, 30, 5);
  for (auto& v : img) v = 100 + 0.01f * v;  // gentle noise around 100..110
  img[15 * 30 + 10] = 60000;
  const size_t replaced = filter_hot_pixels(img.data(), 30, 30, 8);
  EXPECT_EQ(replaced, 1u);
  EXPECT_LT(img[15 * 30 + 10], 111.0f);
  EXPECT_GT(img[15 * 30 + 10], 99.0f);
}

TEST(Preprocess, NeighbourAveragingWeightsByHand) {
  // 3 × 3 square grid; every point has pattern A except the centre, which has B.
  // σ = 1 step: edge neighbours weigh e^(−1/2), corner neighbours e^(−1); the centre's result is
  // (B + (4 e^(−1/2) + 4 e^(−1)) A) / (1 + 4 e^(−1/2) + 4 e^(−1)), then renormalised.
  const ScanGrid grid{GridKind::square, 3, 3, 0.05};
  const size_t px = 4;
  const std::vector<float> A{1, 2, 3, 4}, B{4, 1, 1, 1};
  std::vector<float> rows[3];
  std::vector<uint8_t> flags[3];
  for (int r = 0; r < 3; ++r) {
    flags[r].assign(3, 1);
    for (int c = 0; c < 3; ++c) {
      const auto& p = (r == 1 && c == 1) ? B : A;
      rows[r].insert(rows[r].end(), p.begin(), p.end());
    }
  }
  const float* rp[3] = {rows[0].data(), rows[1].data(), rows[2].data()};
  const uint8_t* fp[3] = {flags[0].data(), flags[1].data(), flags[2].data()};
  std::vector<float> out(3 * px);
  std::vector<uint8_t> usable(3);
  const std::vector<uint8_t> mask(px, 1);
  neighbour_average_row(grid, 1.0, 1, rp, fp, mask, px, out.data(), usable.data());
  const double we = std::exp(-0.5), wc = std::exp(-1.0), wsum = 1 + 4 * we + 4 * wc;
  std::vector<double> v(px);
  double mean = 0, var = 0;
  for (size_t q = 0; q < px; ++q) mean += v[q] = (B[q] + (4 * we + 4 * wc) * A[q]) / wsum;
  mean /= px;
  for (double x : v) var += (x - mean) * (x - mean);
  var /= px;
  for (size_t q = 0; q < px; ++q) EXPECT_NEAR(out[px + q], (v[q] - mean) / std::sqrt(var), 1e-5);
  EXPECT_TRUE(usable[1]);
}

}  // namespace
}  // namespace orderband
