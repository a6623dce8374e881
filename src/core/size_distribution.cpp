// Log-normal and LSW size distributions.
#include "orderband/size_distribution.hpp"

#include <algorithm>
#include <cmath>

#include "orderband/error.hpp"
#include "orderband/units.hpp"

namespace orderband {

double lsw_density(double u) {
  if (u <= 0 || u >= 1.5) return 0.0;
  return 4.0 / 9.0 * u * u * std::pow(3.0 / (3.0 + u), 7.0 / 3.0) * std::pow(1.5 / (1.5 - u), 11.0 / 3.0) *
         std::exp(-u / (1.5 - u));
}

namespace {

/// The CDF of h(u) tabulated once by the trapezoid rule on a fine grid (u, P); every LSW
/// distribution shares it, scaled by its mean.
struct LswTable {
  std::vector<double> u, p;
};
const LswTable& lsw_table() {
  static const LswTable table = [] {
    const int n = 20000;
    LswTable t{std::vector<double>(n + 1), std::vector<double>(n + 1)};
    double acc = 0;
    for (int k = 0; k <= n; ++k) {
      const double u = 1.5 * k / n;
      if (k > 0) acc += 0.5 * (lsw_density(u) + lsw_density(1.5 * (k - 1) / n)) * 1.5 / n;
      t.u[k] = u;
      t.p[k] = acc;
    }
    for (double& q : t.p) q /= acc;
    return t;
  }();
  return table;
}

}  // namespace

SizeDistribution SizeDistribution::lognormal(double median_um, double sigma_ln) {
  if (!(median_um > 0)) fail("log-normal median diameter must be positive, got ", median_um, " µm");
  if (!(sigma_ln >= 0) || sigma_ln > 2) fail("log-normal sigma must be within [0, 2], got ", sigma_ln);
  SizeDistribution d;
  d.kind_ = Kind::lognormal;
  d.a_ = median_um;
  d.b_ = sigma_ln;
  return d;
}

SizeDistribution SizeDistribution::lsw(double mean_um) {
  if (!(mean_um > 0)) fail("LSW mean diameter must be positive, got ", mean_um, " µm");
  SizeDistribution d;
  d.kind_ = Kind::lsw;
  d.a_ = mean_um;
  return d;
}

SizeDistribution SizeDistribution::fixed(double diameter_um) {
  if (!(diameter_um > 0)) fail("particle diameter must be positive, got ", diameter_um, " µm");
  SizeDistribution d;
  d.kind_ = Kind::fixed;
  d.a_ = diameter_um;
  return d;
}

double SizeDistribution::quantile(double p) const {
  p = std::clamp(p, 1e-12, 1 - 1e-12);
  switch (kind_) {
    case Kind::fixed:
      return a_;
    case Kind::lognormal: {
      // Inverse normal CDF by bisection on erfc (robust, fast enough for sampling).
      double lo = -10, hi = 10;
      for (int it = 0; it < 80; ++it) {
        const double mid = 0.5 * (lo + hi);
        (0.5 * std::erfc(-mid / std::sqrt(2.0)) < p ? lo : hi) = mid;
      }
      return a_ * std::exp(b_ * 0.5 * (lo + hi));
    }
    case Kind::lsw: {
      const LswTable& tab = lsw_table();
      const auto it = std::lower_bound(tab.p.begin(), tab.p.end(), p);
      const size_t k = std::clamp<size_t>(it - tab.p.begin(), 1, tab.p.size() - 1);
      const double t = (p - tab.p[k - 1]) / std::max(1e-300, tab.p[k] - tab.p[k - 1]);
      return a_ * (tab.u[k - 1] + t * (tab.u[k] - tab.u[k - 1]));
    }
  }
  return a_;
}

double SizeDistribution::sample(std::mt19937_64& rng) const {
  if (kind_ == Kind::fixed) return a_;
  if (kind_ == Kind::lognormal) return a_ * std::exp(b_ * std::normal_distribution<double>(0, 1)(rng));
  return quantile(std::uniform_real_distribution<double>(0, 1)(rng));
}

double SizeDistribution::mean_um() const {
  switch (kind_) {
    case Kind::fixed:
      return a_;
    case Kind::lognormal:
      return a_ * std::exp(0.5 * b_ * b_);
    case Kind::lsw:
      return a_;
  }
  return a_;
}

double SizeDistribution::mean_power(int k) const {
  // x^k by repeated multiplication (the same rounding as a product written out).
  auto power = [k](double x) {
    double r = x;
    for (int i = 1; i < k; ++i) r *= x;
    return k == 0 ? 1.0 : r;
  };
  switch (kind_) {
    case Kind::fixed:
      return power(a_);
    case Kind::lognormal:
      return power(a_) * std::exp(0.5 * k * k * b_ * b_);
    case Kind::lsw: {
      double acc = 0;
      const int n = 20000;
      for (int i = 0; i < n; ++i) {
        const double u = 1.5 * (i + 0.5) / n;
        acc += power(u) * lsw_density(u) * 1.5 / n;
      }
      double scaled = acc;
      for (int i = 0; i < k; ++i) scaled *= a_;
      return scaled;
    }
  }
  return 0;
}

double SizeDistribution::max_um() const {
  switch (kind_) {
    case Kind::fixed:
      return a_;
    case Kind::lognormal:
      return quantile(1 - 1e-6);
    case Kind::lsw:
      return 1.5 * a_;
  }
  return a_;
}

double SizeDistribution::density(double d) const {
  switch (kind_) {
    case Kind::fixed:
      return 0;
    case Kind::lognormal:
      if (d <= 0) return 0;
      if (b_ == 0) return 0;
      return std::exp(-0.5 * std::pow(std::log(d / a_) / b_, 2)) / (d * b_ * std::sqrt(2 * kPi));
    case Kind::lsw:
      return lsw_density(d / a_) / a_;
  }
  return 0;
}

}  // namespace orderband
