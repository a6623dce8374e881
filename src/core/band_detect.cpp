// Line Radon transform band detection.
#include "orderband/band_detect.hpp"

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>

#include "orderband/error.hpp"
#include "orderband/units.hpp"

namespace orderband {

BandDetector::BandDetector(const DetectorGeometry& geometry, const std::vector<uint8_t>& mask,
                           const BandDetectSpec& spec)
    : geometry_(geometry), spec_(spec), width_(geometry.width()), height_(geometry.height()) {
  if (spec.angle_steps < 8 || spec.max_bands < 3) fail("band detection needs ≥ 8 angles and ≥ 3 bands");
  rho_max_ = 0.5 * std::hypot(width_, height_);
  rho_bins_ = static_cast<int>(std::ceil(2 * rho_max_)) + 2;
  for (int q = 0; q < width_ * height_; ++q)
    if (mask.empty() || mask[q]) pixels_.push_back(static_cast<uint32_t>(q));
  const size_t n = pixels_.size();
  rho_bin_.resize(spec.angle_steps * n);
  rho_frac_.resize(spec.angle_steps * n);
  std::vector<float> counts(static_cast<size_t>(spec.angle_steps) * rho_bins_, 0.0f);
  for (int a = 0; a < spec.angle_steps; ++a) {
    const double t = kPi * a / spec.angle_steps, c = std::cos(t), s = std::sin(t);
    for (size_t k = 0; k < n; ++k) {
      const int q = static_cast<int>(pixels_[k]);
      const int col = q % width_, row = q / width_;  // pixel q's column and row
      const double x = col + 0.5 - 0.5 * width_, y = row + 0.5 - 0.5 * height_;
      const double r = x * c + y * s + rho_max_;  // ≥ 0
      const int b = static_cast<int>(r);
      rho_bin_[a * n + k] = static_cast<uint16_t>(b);
      rho_frac_[a * n + k] = static_cast<float>(r - b);
      counts[a * rho_bins_ + b] += static_cast<float>(1 - (r - b));
      counts[a * rho_bins_ + b + 1] += static_cast<float>(r - b);
    }
  }
  line_norm_.resize(counts.size());
  for (size_t k = 0; k < counts.size(); ++k) line_norm_[k] = counts[k] > 4 ? 1.0f / counts[k] : 0.0f;
}

std::vector<DetectedBand> BandDetector::detect(const float* pattern) const {
  const int A = spec_.angle_steps, R = rho_bins_;
  const size_t n = pixels_.size();
  std::vector<float> radon(static_cast<size_t>(A) * R, 0.0f);
  std::vector<float> values(n);
  for (size_t k = 0; k < n; ++k) values[k] = pattern[pixels_[k]];
  for (int a = 0; a < A; ++a) {
    float* row = radon.data() + static_cast<size_t>(a) * R;
    const uint16_t* bins = rho_bin_.data() + a * n;
    const float* frac = rho_frac_.data() + a * n;
    for (size_t k = 0; k < n; ++k) {
      row[bins[k]] += values[k] * (1 - frac[k]);
      row[bins[k] + 1] += values[k] * frac[k];
    }
    for (int r = 0; r < R; ++r) row[r] *= line_norm_[static_cast<size_t>(a) * R + r];
  }
  // Band filter across ρ: mean over |Δρ| ≤ h minus mean over h < |Δρ| ≤ 3h; lines too short are skipped.
  const int h = std::max(1, static_cast<int>(std::lround(spec_.band_half_width_px)));
  std::vector<float> filtered(radon.size(), -1e30f);
  for (int a = 0; a < A; ++a)
    for (int r = 3 * h; r < R - 3 * h; ++r) {
      const size_t base = static_cast<size_t>(a) * R;
      bool ok = true;
      double centre = 0, flank = 0;
      for (int d = -3 * h; d <= 3 * h; ++d) {
        if (line_norm_[base + r + d] == 0) ok = false;
        (std::abs(d) <= h ? centre : flank) += radon[base + r + d];
      }
      if (ok) filtered[base + r] = static_cast<float>(centre / (2 * h + 1) - flank / (4 * h));
    }
  // Peaks, strongest first. Two peaks are the same band when their lines stay within
  // min_separation_px of each other across the whole screen (the chord inside the mask circle).
  std::vector<std::pair<float, int>> order;
  for (int k = 0; k < A * R; ++k)
    if (filtered[k] > 0) order.emplace_back(filtered[k], k);
  std::sort(order.begin(), order.end(), std::greater<>());
  std::vector<DetectedBand> bands;
  const double radius = 0.5 * std::min(width_, height_);
  auto at = [&](int a, int r) {
    a = (a % A + A) % A;
    return (r >= 0 && r < R) ? filtered[static_cast<size_t>(a) * R + r] : -1e30f;
  };
  for (const auto& [value, k] : order) {
    if (static_cast<int>(bands.size()) >= spec_.max_bands) break;
    const int ai = k / R, ri = k % R;
    // Local maximum only.
    if (at(ai - 1, ri) > value || at(ai + 1, ri) > value || at(ai, ri - 1) > value || at(ai, ri + 1) > value) continue;
    // Sub-bin position by parabolas through the neighbours in angle and in ρ.
    auto vertex = [](double l, double c, double r) {
      const double d = l - 2 * c + r;
      return d < 0 ? std::clamp(0.5 * (l - r) / d, -0.5, 0.5) : 0.0;
    };
    const double a = ai + vertex(at(ai - 1, ri), value, at(ai + 1, ri));
    const double rho = ri - rho_max_ + vertex(at(ai, ri - 1), value, at(ai, ri + 1));  // bin b holds ρ = b − ρ_max
    const double t = kPi * a / A, c = std::cos(t), s = std::sin(t);
    bool same = false;
    for (const DetectedBand& b : bands) {
      const double tb = deg_to_rad(b.theta_deg), cb = std::cos(tb), sb = std::sin(tb);
      const double half = std::sqrt(std::max(0.0, radius * radius - rho * rho));
      double worst = 0;
      for (double u : {-half, half}) {
        const double x = rho * c - u * s, y = rho * s + u * c;  // chord end, relative to the image centre
        worst = std::max(worst, std::abs(x * cb + y * sb - b.rho_px));
      }
      same = same || worst <= spec_.min_separation_px;
    }
    if (same) continue;
    const double x0 = 0.5 * width_ + rho * c, y0 = 0.5 * height_ + rho * s;
    const Eigen::Vector3d d1 = geometry_.direction_sample({x0 - 20 * s, y0 + 20 * c}).vec();
    const Eigen::Vector3d d2 = geometry_.direction_sample({x0 + 20 * s, y0 - 20 * c}).vec();
    bands.push_back({SampleDirection(d1.cross(d2)), value, 180.0 * a / A, rho});
  }
  return bands;
}

}  // namespace orderband
