// A sample of raw patterns: the stored width and hot pixels.
#include "orderband/pattern_sample.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <vector>

#include "orderband/error.hpp"
#include "orderband/preprocess.hpp"

namespace orderband {
namespace {

/// Mean square difference of the pixels W apart in storage order: vertical neighbours when the
/// pattern is W pixels wide.
double row_difference(const std::vector<double>& mean, size_t width) {
  double sum = 0;
  for (size_t q = 0; q + width < mean.size(); ++q) sum += (mean[q + width] - mean[q]) * (mean[q + width] - mean[q]);
  return sum / double(mean.size() - width);
}

/// The width of the smallest row difference among the layouts with the same pixel count.
void find_likely_width(const std::vector<double>& mean, PatternSample& s) {
  const size_t n = mean.size(), declared = static_cast<size_t>(s.declared_width_px);
  const double at_declared = row_difference(mean, declared);
  double best = at_declared;
  s.likely_width_px = s.declared_width_px;
  for (size_t w = 8; w * 8 <= n; ++w) {
    if (n % w != 0 || w == declared) continue;
    const double d = row_difference(mean, w);
    if (d < best) best = d, s.likely_width_px = static_cast<int>(w);
  }
  s.row_difference_ratio = best > 0 ? at_declared / best : 1.0;
}

/// Pixels brighter than every one of their 8 neighbours by more than `threshold` × 1.4826 × MAD (the
/// pattern's median absolute deviation from the 3 × 3 median, as the hot-pixel filter measures
/// it): isolated spikes. A sharp band edge, bright along its length, is not one.
size_t count_isolated_spikes(const std::vector<float>& p, int w, int h, double threshold) {
  const double limit = threshold * local_median_3x3(p.data(), w, h).mad;
  if (!(limit > 0)) return 0;
  size_t spikes = 0;
  for (int i = 1; i + 1 < h; ++i)
    for (int j = 1; j + 1 < w; ++j) {
      float brightest = -INFINITY;
      for (int di = -1; di <= 1; ++di)
        for (int dj = -1; dj <= 1; ++dj)
          if (di || dj) brightest = std::max(brightest, p[static_cast<size_t>(i + di) * w + j + dj]);
      spikes += p[static_cast<size_t>(i) * w + j] - brightest > limit;
    }
  return spikes;
}

}  // namespace

PatternSample sample_patterns(PatternSource& source, size_t sample_points, double hot_pixel_threshold) {
  PatternSample s;
  s.declared_width_px = source.width();
  s.declared_height_px = source.height();
  s.hot_pixel_threshold = hot_pixel_threshold;
  const size_t px = source.pixels(), n = std::min(sample_points, source.count());
  std::vector<float> pattern(px);
  std::vector<double> mean(px, 0.0);
  size_t hot = 0;
  for (size_t k = 0; k < n; ++k) {
    const size_t index = n > 1 ? k * (source.count() - 1) / (n - 1) : 0;
    source.read(index, 1, pattern.data());
    if (std::isnan(pattern[0])) continue;  // a faulty pattern (PatternSource::faults)
    for (size_t q = 0; q < px; ++q) mean[q] += pattern[q];
    hot += count_isolated_spikes(pattern, source.width(), source.height(), hot_pixel_threshold);
    ++s.patterns;
  }
  if (s.patterns == 0) return s;
  for (double& v : mean) v /= double(s.patterns);
  find_likely_width(mean, s);
  s.hot_pixels_per_pattern = double(hot) / double(s.patterns);
  return s;
}

void require_declared_width(const PatternSample& s, const std::string& source_description) {
  if (!s.width_wrong()) return;
  char ratio[32];
  std::snprintf(ratio, sizeof ratio, "%.3g", s.row_difference_ratio);
  fail(source_description, ": the patterns look ", s.likely_width_px, " x ",
       s.declared_width_px * s.declared_height_px / s.likely_width_px, " px, not the declared ", s.declared_width_px,
       " x ", s.declared_height_px, " (vertically neighbouring pixels differ ", ratio,
       " times more at the declared width, over ", s.patterns, " sampled patterns); check width_px and height_px");
}

std::optional<std::string> hot_pixel_warning(const PatternSample& s, const PreprocessSpec& spec) {
  if (spec.hot_pixel_filter || s.hot_pixels_per_pattern < kHotPixelsWarning) return std::nullopt;
  char text[400];
  std::snprintf(
      text, sizeof text,
      "%.1f hot pixels per pattern (%zu sampled patterns; pixels brighter than all 8 neighbours by more "
      "than %.3g MADs) and the hot-pixel filter is off: set [preprocess] hot_pixel_filter = true, or orientations "
      "and fractions may fail at many points",
      s.hot_pixels_per_pattern, s.patterns, s.hot_pixel_threshold);
  return std::string(text);
}

}  // namespace orderband
