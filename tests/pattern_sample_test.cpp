// The raw-pattern sample read before a run: a wrongly declared width and planted hot pixels are
// found, and rendered patterns raise neither.
#include "orderband/pattern_sample.hpp"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <random>

#include "orderband/error.hpp"
#include "orderband/pattern_files.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

constexpr int kSide = 8, kPx = 48;  // write_small_scan: 8 × 8 points of 48 × 48 px

struct RenderedStack {
  std::string dir = test::make_temp_dir("pattern-sample");
  std::string raw;
  ScanGrid grid{GridKind::square, kSide, kSide, 0.03};
  RenderedStack() {
    test::write_small_scan(dir, kSide, 3);
    raw = dir + "/scan/patterns.raw";
  }
  ~RenderedStack() { std::filesystem::remove_all(dir); }
  PatternSample sample(const std::string& path, int width, int height) const {
    PatternSourceSpec spec;
    spec.path = path;
    spec.width_px = width;
    spec.height_px = height;
    const auto source = open_pattern_source(spec, grid);
    return sample_patterns(*source, kPatternSamplePoints, 8.0);
  }
};

TEST(PatternSample, TheStoredWidthIsFoundWhateverWidthIsDeclared) {
  const RenderedStack s;
  const PatternSample right = s.sample(s.raw, kPx, kPx);
  EXPECT_EQ(right.patterns, 64u);
  EXPECT_EQ(right.likely_width_px, kPx);
  EXPECT_DOUBLE_EQ(right.row_difference_ratio, 1.0);
  EXPECT_FALSE(right.width_wrong());
  EXPECT_NO_THROW(require_declared_width(right, "stack"));
  // The same 2,304 pixels per pattern read with other widths: 64 × 36, 36 × 64, 32 × 72, 72 × 32
  // (not multiples), 96 × 24 (two true rows per stored row) and 24 × 96 (half rows).
  for (auto [w, h] : {std::pair{64, 36}, {36, 64}, {32, 72}, {72, 32}, {96, 24}, {24, 96}}) {
    const PatternSample wrong = s.sample(s.raw, w, h);
    EXPECT_EQ(wrong.likely_width_px, kPx) << w << " x " << h;
    EXPECT_TRUE(wrong.width_wrong()) << w << " x " << h << ": ratio " << wrong.row_difference_ratio;
    try {
      require_declared_width(wrong, "stack");
      ADD_FAILURE() << w << " x " << h << " passed";
    } catch (const Error& e) {
      EXPECT_NE(std::string(e.what()).find("the patterns look 48 x 48 px, not the declared " + std::to_string(w) +
                                           " x " + std::to_string(h)),
                std::string::npos)
          << e.what();
    }
  }
}

TEST(PatternSample, PlantedHotPixelsAreCountedAndRenderedBandsAreNot) {
  const RenderedStack s;
  const PatternSample clean = s.sample(s.raw, kPx, kPx);
  // Rendered bands, their edges and zone axes are not isolated spikes: the warning level (1 per
  // pattern) stays well above what rendered patterns show.
  EXPECT_LT(clean.hot_pixels_per_pattern, 0.3);
  PreprocessSpec off;
  off.hot_pixel_filter = false;
  EXPECT_FALSE(hot_pixel_warning(clean, off).has_value());

  // Five saturated pixels per pattern at random interior places at least 3 px apart (common
  // practice, no source: hot pixels of a camera are single saturated pixels).
  std::ifstream in(s.raw, std::ios::binary);
  std::vector<uint16_t> data(static_cast<size_t>(kSide) * kSide * kPx * kPx);
  in.read(reinterpret_cast<char*>(data.data()), static_cast<std::streamsize>(data.size() * 2));
  std::mt19937 rng(5);
  std::uniform_int_distribution<int> at(1, kPx - 2);
  for (size_t k = 0; k < static_cast<size_t>(kSide) * kSide; ++k) {
    std::vector<std::pair<int, int>> placed;
    while (placed.size() < 5) {
      const int i = at(rng), j = at(rng);
      bool apart = true;
      for (auto [pi, pj] : placed) apart = apart && (std::abs(pi - i) >= 3 || std::abs(pj - j) >= 3);
      if (!apart) continue;
      placed.push_back({i, j});
      data[k * kPx * kPx + static_cast<size_t>(i) * kPx + j] = 65535;
    }
  }
  const std::string hot_raw = s.dir + "/hot.raw";
  std::ofstream(hot_raw, std::ios::binary)
      .write(reinterpret_cast<const char*>(data.data()), static_cast<std::streamsize>(data.size() * 2));
  const PatternSample hot = s.sample(hot_raw, kPx, kPx);
  EXPECT_GE(hot.hot_pixels_per_pattern, 5.0);
  EXPECT_LT(hot.hot_pixels_per_pattern, 5.3);
  EXPECT_EQ(hot.likely_width_px, kPx);  // spikes do not disturb the width
  const auto warning = hot_pixel_warning(hot, off);
  ASSERT_TRUE(warning.has_value());
  EXPECT_NE(warning->find("hot_pixel_filter = true"), std::string::npos) << *warning;
  PreprocessSpec on;
  on.hot_pixel_filter = true;
  EXPECT_FALSE(hot_pixel_warning(hot, on).has_value());
}

}  // namespace
}  // namespace orderband
