// The end-member mixture (end_member_mixture.hpp).
#include "orderband/end_member_mixture.hpp"

#include <algorithm>
#include <cmath>

namespace orderband {

namespace {

double gaussian(double x, const EndMember& c) {
  return c.weight / (c.sd * std::sqrt(2 * M_PI)) * std::exp(-0.5 * std::pow((x - c.mean) / c.sd, 2));
}

/// The mixed points' density per unit share between the means: uniform on [lo, hi] convolved with N(0, s²).
double between_density(double x, double lo, double hi, double s) {
  if (hi - lo < 1e-6 * s) return std::exp(-0.5 * std::pow((x - lo) / s, 2)) / (s * std::sqrt(2 * M_PI));
  return 0.5 * (std::erf((x - lo) / (s * M_SQRT2)) - std::erf((x - hi) / (s * M_SQRT2))) / (hi - lo);
}

/// The mixed points' density per unit share.
double mixed_density(double x, const EndMemberMixture& m) {
  if (m.model == MixedPoints::broad)
    return x >= m.central_lo && x <= m.central_hi ? 1 / (m.central_hi - m.central_lo) : 0.0;
  const auto& c = m.end_members;
  return between_density(x, std::min(c[0].mean, c[1].mean), std::max(c[0].mean, c[1].mean), std::min(c[0].sd, c[1].sd));
}

}  // namespace

double EndMemberMixture::density(double x) const {
  const bool central = x >= central_lo && x <= central_hi;
  const double pure = gaussian(x, end_members[0]) + gaussian(x, end_members[1]);
  if (model == MixedPoints::broad) return pure + (central ? mixed / (central_hi - central_lo) : 0.0);
  return pure + mixed * mixed_density(x, *this) + (central ? stray / (central_hi - central_lo) : 0.0);
}

EndMemberMixture end_member_mixture(const std::vector<double>& v, MixedPoints model) {
  EndMemberMixture mix;
  mix.model = model;
  auto& c = mix.end_members;
  c[0] = {0.0, 0.2, 0.0};
  c[1] = {1.0, 0.2, 0.0};
  if (v.size() < 4) return mix;
  std::vector<double> sorted = v;
  std::sort(sorted.begin(), sorted.end());
  mix.central_lo = sorted[sorted.size() / 200], mix.central_hi = sorted[sorted.size() - 1 - sorted.size() / 200];
  mix.central_hi = std::max(mix.central_hi, mix.central_lo + 1e-6);
  const bool between = model == MixedPoints::between_means;
  const double floor_sd = 1e-4 * (mix.central_hi - mix.central_lo);
  c[0].weight = c[1].weight = 0.45;
  mix.mixed = between ? 0.05 : 0.1;
  mix.stray = between ? 0.05 : 0.0;
  std::vector<double> r0(v.size()), r1(v.size());
  for (int it = 0; it < 300; ++it) {
    // E step: each value's responsibilities under the present mixture (the mixed points' span and
    // spread follow the end members; they are held at their present values in the M step).
    double mixed_sum = 0, stray_sum = 0;
    for (size_t k = 0; k < v.size(); ++k) {
      const double total = std::max(mix.density(v[k]), 1e-300);
      r0[k] = gaussian(v[k], c[0]) / total, r1[k] = gaussian(v[k], c[1]) / total;
      const double rm = mix.mixed * mixed_density(v[k], mix) / total;
      mixed_sum += rm, stray_sum += std::max(0.0, 1 - r0[k] - r1[k] - rm);
    }
    // M step.
    std::array<EndMember, 2> next;
    for (int j = 0; j < 2; ++j) {
      const std::vector<double>& r = j ? r1 : r0;
      double w = 0, m = 0;
      for (size_t k = 0; k < v.size(); ++k) w += r[k], m += r[k] * v[k];
      if (w < 1e-9) return mix;
      m /= w;
      double ss = 0;
      for (size_t k = 0; k < v.size(); ++k) ss += r[k] * (v[k] - m) * (v[k] - m);
      if (between) m = std::clamp(m, mix.central_lo, mix.central_hi);
      next[j] = {m, std::max(std::sqrt(ss / w), floor_sd), w / v.size()};
    }
    const bool done = std::abs(next[0].mean - c[0].mean) + std::abs(next[1].mean - c[1].mean) < 1e-9;
    c = next;
    if (between) {
      mix.mixed = std::max(1e-6, mixed_sum / v.size());
      mix.stray = std::max(1e-6, stray_sum / v.size());
    } else {
      mix.mixed = std::max(1e-6, 1 - c[0].weight - c[1].weight);
    }
    if (done) break;
  }
  if (c[0].mean > c[1].mean) std::swap(c[0], c[1]);
  return mix;
}

std::array<EndMember, 2> two_component_mixture(const std::vector<double>& values, MixedPoints model) {
  return end_member_mixture(values, model).end_members;
}

}  // namespace orderband
