// Pattern preprocessing.
#include "orderband/preprocess.hpp"

#include <algorithm>
#include <cmath>

#include "orderband/error.hpp"

namespace orderband {

LocalMedian local_median_3x3(const float* p, int w, int h) {
  const size_t n = static_cast<size_t>(w) * h;
  LocalMedian m;
  m.median.resize(n), m.deviation.resize(n);
  float nb[9];
  for (int i = 0; i < h; ++i)
    for (int j = 0; j < w; ++j) {
      int k = 0;
      for (int di = -1; di <= 1; ++di)
        for (int dj = -1; dj <= 1; ++dj) {
          const int ii = std::clamp(i + di, 0, h - 1), jj = std::clamp(j + dj, 0, w - 1);
          nb[k++] = p[static_cast<size_t>(ii) * w + jj];
        }
      std::nth_element(nb, nb + 4, nb + 9);
      const size_t q = static_cast<size_t>(i) * w + j;
      m.median[q] = nb[4];
      m.deviation[q] = std::abs(p[q] - nb[4]);
    }
  std::vector<float> sorted = m.deviation;
  std::nth_element(sorted.begin(), sorted.begin() + n / 2, sorted.end());
  m.mad = 1.4826 * sorted[n / 2];
  return m;
}

size_t filter_hot_pixels(float* p, int w, int h, double threshold) {
  const LocalMedian m = local_median_3x3(p, w, h);
  if (!(m.mad > 0)) return 0;
  size_t replaced = 0;
  for (size_t q = 0; q < m.median.size(); ++q)
    if (m.deviation[q] > threshold * m.mad) {
      p[q] = m.median[q];
      ++replaced;
    }
  return replaced;
}

Preprocessor::Preprocessor(const PreprocessSpec& spec, int width, int height, std::vector<float> static_background,
                           const GrayImage* mask_image)
    : spec_(spec), w_(width), h_(height) {
  const size_t n = static_cast<size_t>(w_) * h_;
  // Mask.
  mask_.assign(n, 1);
  if (spec.mask == MaskKind::circle) {
    const double r = spec.mask_radius_px > 0 ? spec.mask_radius_px : 0.5 * std::min(w_, h_);
    const double cx = 0.5 * w_, cy = 0.5 * h_;
    for (int i = 0; i < h_; ++i)
      for (int j = 0; j < w_; ++j) mask_[static_cast<size_t>(i) * w_ + j] = std::hypot(j + 0.5 - cx, i + 0.5 - cy) <= r;
  } else if (spec.mask == MaskKind::file) {
    if (!mask_image) fail("the pattern mask '", spec.mask_file, "' was not read");
    const GrayImage& m = *mask_image;
    if (m.width != w_ || m.height != h_)
      fail("mask '", spec.mask_file, "' is ", m.width, " x ", m.height, " px; patterns are ", w_, " x ", h_, " px");
    for (size_t q = 0; q < n; ++q) mask_[q] = m.pixels[q] != 0;
  }
  mask_count_ = static_cast<size_t>(std::count(mask_.begin(), mask_.end(), 1));
  if (mask_count_ < 16) fail("the pattern mask keeps only ", mask_count_, " pixels; enlarge it");
  // Static background, normalised to mean 1 inside the mask.
  if (spec.static_background != StaticBackgroundKind::none) {
    if (static_background.size() != n)
      fail("static background has ", static_background.size(), " values, expected ", n);
    double sum = 0;
    for (size_t q = 0; q < n; ++q) sum += mask_[q] ? static_background[q] : 0.0;
    const double mean = sum / mask_count_;
    if (!(mean > 0)) fail("static background has no positive signal inside the mask");
    static_inv_.resize(n);
    for (size_t q = 0; q < n; ++q)
      static_inv_[q] = static_cast<float>(1.0 / std::max(static_background[q] / mean, 1e-3));
  }
  double sigma = spec.dynamic_background_sigma_px;
  if (sigma < 0) sigma = 0.1 * w_;
  if (sigma > 0) blur_ = std::make_unique<GaussianBlur>(w_, h_, sigma);
}

std::vector<float> Preprocessor::static_background() const {
  std::vector<float> b(static_inv_.size());
  for (size_t q = 0; q < b.size(); ++q) b[q] = 1.0f / static_inv_[q];
  return b;
}

bool Preprocessor::apply(float* p) const {
  const size_t n = static_cast<size_t>(w_) * h_;
  // A dead pattern (constant inside the mask) is unusable, whatever comes next.
  float lo = INFINITY, hi = -INFINITY;
  for (size_t q = 0; q < n; ++q)
    if (mask_[q]) lo = std::min(lo, p[q]), hi = std::max(hi, p[q]);
  if (!(hi > lo)) {
    std::fill(p, p + n, 0.0f);
    return false;
  }
  if (spec_.hot_pixel_filter) filter_hot_pixels(p, w_, h_, spec_.hot_pixel_threshold);
  if (!static_inv_.empty())
    for (size_t q = 0; q < n; ++q) p[q] *= static_inv_[q];
  if (blur_) {
    thread_local std::vector<float> smooth;
    smooth.resize(n);
    blur_->apply(p, smooth.data());
    double mean = 0;
    for (size_t q = 0; q < n; ++q) mean += smooth[q];
    mean /= n;
    const float floor = static_cast<float>(1e-3 * std::abs(mean));
    for (size_t q = 0; q < n; ++q) p[q] /= std::max(smooth[q], floor);
  }
  double sum = 0, sum2 = 0;
  for (size_t q = 0; q < n; ++q)
    if (mask_[q]) sum += p[q], sum2 += double(p[q]) * p[q];
  const double mean = sum / mask_count_;
  const double var = sum2 / mask_count_ - mean * mean;
  if (!(var > 1e-12 * std::max(1.0, mean * mean))) {
    std::fill(p, p + n, 0.0f);
    return false;
  }
  const double inv_sd = spec_.unit_variance ? 1.0 / std::sqrt(var) : 1.0;
  for (size_t q = 0; q < n; ++q) p[q] = mask_[q] ? static_cast<float>((p[q] - mean) * inv_sd) : 0.0f;
  return true;
}

std::vector<float> scan_mean_pattern(PatternSource& source, size_t chunk, const ProgressFn& progress, size_t at_most) {
  const size_t px = source.pixels(), total = source.count();
  const bool sampled = at_most > 0 && total > at_most;
  const size_t points = sampled ? at_most : total;
  std::vector<double> sum(px, 0.0);
  std::vector<float> buffer(chunk * px);
  size_t used = 0;
  for (size_t first = 0; first < points; first += chunk) {
    const size_t n = std::min(chunk, points - first);
    if (!sampled)
      source.read(first, n, buffer.data());
    else
      for (size_t k = 0; k < n; ++k)  // the same points as spread_sample over 0 … total − 1
        source.read(spread_position(first + k, total, at_most), 1, buffer.data() + k * px);
    for (size_t k = 0; k < n; ++k) {
      if (std::isnan(buffer[k * px])) continue;  // a faulty pattern (PatternSource::faults)
      for (size_t q = 0; q < px; ++q) sum[q] += buffer[k * px + q];
      ++used;
    }
    if (progress) progress(first + n, points);
  }
  if (used == 0) {
    const auto faults = source.faults();
    fail(source.describe(), ": no pattern of the scan could be read (", faults.size(),
         " faulty; first: ", faults.empty() ? "" : faults.begin()->second, ")");
  }
  std::vector<float> mean(px);
  for (size_t q = 0; q < px; ++q) mean[q] = static_cast<float>(sum[q] / used);
  return mean;
}

Preprocessor make_preprocessor(const PreprocessSpec& spec, PatternSource& source, const PreprocessImages& images,
                               const ProgressFn& progress) {
  std::vector<float> background;
  if (spec.static_background == StaticBackgroundKind::scan_mean) {
    background = scan_mean_pattern(source, 256, progress, spec.scan_mean_points);
    double sigma = spec.static_background_sigma_px;
    if (sigma < 0) sigma = 0.1 * source.width();
    if (sigma > 0) GaussianBlur(source.width(), source.height(), sigma).apply(background.data(), background.data());
  } else if (spec.static_background == StaticBackgroundKind::file) {
    if (!images.static_background) fail("the static background '", spec.static_background_file, "' was not read");
    const GrayImage& img = *images.static_background;
    if (img.width != source.width() || img.height != source.height())
      fail("static background '", spec.static_background_file, "' is ", img.width, " x ", img.height,
           " px; patterns are ", source.width(), " x ", source.height(), " px");
    background.assign(img.pixels.begin(), img.pixels.end());
  }
  return Preprocessor(spec, source.width(), source.height(), std::move(background),
                      images.mask ? &*images.mask : nullptr);
}

namespace {

/// The weight of neighbour `nb` of point `self`: a Gaussian of their distance in scan steps.
double neighbour_weight(const ScanGrid& grid, const GridPoint& self, const GridPoint& nb, double sigma) {
  const double d = (grid.position_um(nb) - grid.position_um(self)).norm() / grid.step_um;
  return std::exp(-0.5 * d * d / (sigma * sigma));
}

/// The weighted mean of preprocessed patterns (the point's own first, weight 1), renormalised
/// inside the mask, into `dst`.
void average_patterns(const std::vector<std::pair<const float*, double>>& terms, const std::vector<uint8_t>& mask,
                      size_t pixels, float* dst, bool unit_variance) {
  double sum = 0, sum2 = 0, wsum = 0;
  for (const auto& t : terms) wsum += t.second;
  size_t count = 0;
  for (size_t q = 0; q < pixels; ++q) {
    double v = 0;
    for (const auto& t : terms) v += t.second * t.first[q];
    v /= wsum;
    dst[q] = static_cast<float>(v);
    if (mask[q]) sum += v, sum2 += v * v, ++count;
  }
  const double mean = sum / count, var = sum2 / count - mean * mean;
  const double inv_sd = !unit_variance ? 1.0 : (var > 0 ? 1.0 / std::sqrt(var) : 0.0);
  for (size_t q = 0; q < pixels; ++q) dst[q] = mask[q] ? static_cast<float>((dst[q] - mean) * inv_sd) : 0.0f;
}

}  // namespace

void neighbour_average_row(const ScanGrid& grid, double sigma, int row, const float* const rows[3],
                           const uint8_t* const usable[3], const std::vector<uint8_t>& mask, size_t pixels, float* out,
                           uint8_t* out_usable, bool unit_variance) {
#pragma omp parallel for schedule(static)
  for (int col = 0; col < grid.cols; ++col) {
    float* dst = out + static_cast<size_t>(col) * pixels;
    out_usable[col] = usable[1][col];
    if (!usable[1][col]) {
      std::fill(dst, dst + pixels, 0.0f);
      continue;
    }
    std::vector<std::pair<const float*, double>> terms{{rows[1] + static_cast<size_t>(col) * pixels, 1.0}};
    const GridPoint self{row, col};
    for (const GridPoint& nb : grid.neighbours(self, 8)) {
      const int k = nb.row - row + 1;
      if (!rows[k] || !usable[k][nb.col]) continue;
      terms.emplace_back(rows[k] + static_cast<size_t>(nb.col) * pixels, neighbour_weight(grid, self, nb, sigma));
    }
    average_patterns(terms, mask, pixels, dst, unit_variance);
  }
}

PreprocessedPoints::PreprocessedPoints(PatternSource& source, const ScanGrid& grid, const Preprocessor& pre)
    : source_(source), grid_(grid), pre_(pre) {}

void PreprocessedPoints::load(const std::vector<size_t>& index, std::vector<float>& patterns,
                              std::vector<uint8_t>& usable) {
  const size_t px = source_.pixels(), n = index.size();
  patterns.resize(n * px);
  usable.resize(n);
  const double sigma = pre_.spec().neighbour_sigma_steps;
  if (sigma <= 0) {
    for (size_t i = 0; i < n; ++i) source_.read(index[i], 1, patterns.data() + i * px);
#pragma omp parallel for schedule(static)
    for (size_t i = 0; i < n; ++i) usable[i] = pre_.apply(patterns.data() + i * px);
    return;
  }
  // Each point with its neighbours: read in order, preprocessed and averaged in parallel.
  std::vector<std::vector<GridPoint>> around(n);
  std::vector<size_t> first(n + 1, 0);
  for (size_t i = 0; i < n; ++i) {
    around[i].push_back(grid_.point(index[i]));
    for (const GridPoint& nb : grid_.neighbours(around[i][0], 8)) around[i].push_back(nb);
    first[i + 1] = first[i] + around[i].size();
  }
  std::vector<float> raw(first[n] * px);
  for (size_t i = 0; i < n; ++i)
    for (size_t j = 0; j < around[i].size(); ++j)
      source_.read(grid_.index(around[i][j]), 1, raw.data() + (first[i] + j) * px);
  std::vector<uint8_t> ok(first[n]);
#pragma omp parallel for schedule(static)
  for (size_t t = 0; t < first[n]; ++t) ok[t] = pre_.apply(raw.data() + t * px);
#pragma omp parallel for schedule(static)
  for (size_t i = 0; i < n; ++i) {
    float* dst = patterns.data() + i * px;
    usable[i] = ok[first[i]];
    if (!usable[i]) {
      std::fill(dst, dst + px, 0.0f);
      continue;
    }
    std::vector<std::pair<const float*, double>> terms;
    for (size_t j = 0; j < around[i].size(); ++j)
      if (ok[first[i] + j])
        terms.emplace_back(raw.data() + (first[i] + j) * px,
                           j == 0 ? 1.0 : neighbour_weight(grid_, around[i][0], around[i][j], sigma));
    average_patterns(terms, pre_.mask(), px, dst, pre_.spec().unit_variance);
  }
}

std::vector<size_t> spread_sample(const std::vector<size_t>& points, size_t at_most) {
  if (at_most == 0 || points.size() <= at_most) return points;
  std::vector<size_t> out(at_most);
  for (size_t i = 0; i < at_most; ++i) out[i] = points[spread_position(i, points.size(), at_most)];
  return out;
}

PreprocessedRows::PreprocessedRows(PatternSource& source, const ScanGrid& grid, const Preprocessor& pre)
    : source_(source), grid_(grid), pre_(pre) {}

void PreprocessedRows::load(int row, std::vector<float>& patterns, std::vector<uint8_t>& usable) {
  const size_t px = source_.pixels();
  patterns.resize(static_cast<size_t>(grid_.cols) * px);
  usable.resize(grid_.cols);
  source_.read(static_cast<size_t>(row) * grid_.cols, grid_.cols, patterns.data());
#pragma omp parallel for schedule(static)
  for (int c = 0; c < grid_.cols; ++c) usable[c] = pre_.apply(patterns.data() + static_cast<size_t>(c) * px);
}

bool PreprocessedRows::next(std::vector<float>& patterns, std::vector<uint8_t>& usable) {
  if (next_row_ >= grid_.rows) return false;
  const int r = next_row_++;
  if (pre_.spec().neighbour_sigma_steps <= 0) {
    load(r, patterns, usable);
    return true;
  }
  // Slide the three-row window to rows r−1, r, r+1.
  for (int k = 0; k < 3; ++k) {
    const int want = r - 1 + k;
    if (want < 0 || want >= grid_.rows) {
      window_rows_[k] = -1;
      continue;
    }
    if (window_rows_[k] == want) continue;
    int found = -1;
    for (int m = 0; m < 3; ++m)
      if (window_rows_[m] == want) found = m;
    if (found >= 0) {
      std::swap(window_[k], window_[found]);
      std::swap(window_usable_[k], window_usable_[found]);
      std::swap(window_rows_[k], window_rows_[found]);
    } else {
      load(want, window_[k], window_usable_[k]);
      window_rows_[k] = want;
    }
  }
  const float* rows[3];
  const uint8_t* flags[3];
  for (int k = 0; k < 3; ++k) {
    rows[k] = window_rows_[k] >= 0 ? window_[k].data() : nullptr;
    flags[k] = window_rows_[k] >= 0 ? window_usable_[k].data() : nullptr;
  }
  patterns.resize(static_cast<size_t>(grid_.cols) * source_.pixels());
  usable.resize(grid_.cols);
  neighbour_average_row(grid_, pre_.spec().neighbour_sigma_steps, r, rows, flags, pre_.mask(), source_.pixels(),
                        patterns.data(), usable.data(), pre_.spec().unit_variance);
  return true;
}

}  // namespace orderband
