#include "orderband/svg_plot.hpp"

#include <gtest/gtest.h>

#include <regex>

using namespace orderband;

TEST(SvgPlot, ChartsOfDifferentSizesOnOnePageKeepTheirOwnClipBoxes) {
  // A page inlines many charts; a clip path id shared by charts of different sizes would clip
  // every chart to the first one's box.
  SvgPlot small(300, 200, "a", "x", "y"), large(560, 300, "b", "x", "y");
  small.line({0, 1}, {0, 1}, "#000", "");
  large.line({0, 1}, {0, 1}, "#000", "");
  const std::regex id("clipPath id=\"([^\"]+)\""), use("clip-path=\"url\\(#([^)]+)\\)\"");
  std::smatch a, b, ua, ub;
  const std::string sa = small.render(), sb = large.render();
  ASSERT_TRUE(std::regex_search(sa, a, id));
  ASSERT_TRUE(std::regex_search(sb, b, id));
  ASSERT_TRUE(std::regex_search(sa, ua, use));
  ASSERT_TRUE(std::regex_search(sb, ub, use));
  EXPECT_NE(a[1].str(), b[1].str());
  EXPECT_EQ(a[1].str(), ua[1].str());
  EXPECT_EQ(b[1].str(), ub[1].str());
}
