// Sphere sizes from truncated sections: Wicksell's transform and its maximum-likelihood inversion.
#include "orderband/stereology.hpp"

#include <algorithm>
#include <cmath>
#include <functional>
#include <utility>

#include <Eigen/Dense>
#include <boost/math/quadrature/gauss_kronrod.hpp>
#include <boost/math/tools/minima.hpp>

#include "orderband/distributions.hpp"
#include "orderband/error.hpp"
#include "orderband/size_distribution.hpp"

namespace orderband {

const char* to_string(SphereSizeModel m) { return m == SphereSizeModel::lognormal ? "lognormal" : "lsw"; }

namespace {
constexpr double kTailZ = 6.4;  // |z| beyond which a normal carries less than 1e-10
}

SphereSizes SphereSizes::of(SphereSizeModel model, std::vector<double> params) {
  SphereSizes s;
  s.model = model;
  s.params = std::move(params);
  s.distribution = model == SphereSizeModel::lognormal ? SizeDistribution::lognormal(s.params.at(0), s.params.at(1))
                                                       : SizeDistribution::lsw(s.params.at(0));
  return s;
}

double SphereSizes::lowest_um() const {
  return model == SphereSizeModel::lognormal ? params[0] * std::exp(-kTailZ * params[1]) : 0.0;
}

double SphereSizes::highest_um() const {
  return model == SphereSizeModel::lognormal ? params[0] * std::exp(kTailZ * params[1]) : 1.5 * params[0];
}

namespace {

/// ∫ g(x cosh t) w(t) dt over the t where x cosh t lies inside the distribution's support; the
/// substitution D = x cosh t removes the inverse square root of Wicksell's kernel.
template <class Weight>
double over_larger_spheres(const SphereSizes& s, double x, Weight&& w) {
  const double hi = s.highest_um();
  if (!(x > 0) || x >= hi) return 0.0;
  const double t_lo = x < s.lowest_um() ? std::acosh(s.lowest_um() / x) : 0.0, t_hi = std::acosh(hi / x);
  auto integrand = [&](double t) { return s.density(x * std::cosh(t)) * w(t); };
  return boost::math::quadrature::gauss_kronrod<double, 31>::integrate(integrand, t_lo, t_hi, 8, 1e-10);
}

}  // namespace

double section_density(const SphereSizes& spheres, double d) {
  return d / spheres.mean_um() * over_larger_spheres(spheres, d, [](double) { return 1.0; });
}

double section_share_above(const SphereSizes& spheres, double limit) {
  if (!(limit > 0)) return 1.0;
  auto sinh2 = [](double t) { return std::sinh(t) * std::sinh(t); };
  return std::min(1.0, limit * limit / spheres.mean_um() * over_larger_spheres(spheres, limit, sinh2));
}

namespace {

/// The distribution for the fit's free parameters x (logarithms of the model's parameters).
SphereSizes sizes_at(SphereSizeModel model, const Eigen::VectorXd& x) {
  std::vector<double> params;
  for (int i = 0; i < x.size(); ++i) params.push_back(std::exp(x[i]));
  return SphereSizes::of(model, std::move(params));
}

double log_likelihood(const SectionSample& sample, const SphereSizes& s) {
  const double share = section_share_above(s, sample.limit_um);
  if (!(share > 0)) return -HUGE_VAL;
  double l = -static_cast<double>(sample.diameter_um.size()) * std::log(share);
  for (double d : sample.diameter_um) {
    const double f = section_density(s, d);
    if (!(f > 0)) return -HUGE_VAL;
    l += std::log(f);
  }
  return l;
}

/// The observed information (Hessian of −ℓ by central differences of step h in x).
Eigen::MatrixXd observed_information(const std::function<double(const Eigen::VectorXd&)>& ell, const Eigen::VectorXd& x,
                                     double h) {
  const int p = static_cast<int>(x.size());
  Eigen::MatrixXd info(p, p);
  const double l0 = ell(x);
  for (int i = 0; i < p; ++i)
    for (int j = i; j < p; ++j) {
      Eigen::VectorXd a = x, b = x, c = x, d = x;
      if (i == j) {
        a[i] += h, b[i] -= h;
        info(i, i) = -(ell(a) - 2 * l0 + ell(b)) / (h * h);
      } else {
        a[i] += h, a[j] += h, b[i] += h, b[j] -= h, c[i] -= h, c[j] += h, d[i] -= h, d[j] -= h;
        info(i, j) = info(j, i) = -(ell(a) - ell(b) - ell(c) + ell(d)) / (4 * h * h);
      }
    }
  return info;
}

/// The maximum of ℓ: one Brent search for the LSW mean; for the log-normal, Brent over ln σ of
/// the likelihood already maximised over the median (nested Brent searches).
Eigen::VectorXd maximise(SphereSizeModel model, const SectionSample& sample,
                         const std::function<double(const Eigen::VectorXd&)>& ell) {
  const auto [lo_it, hi_it] = std::minmax_element(sample.diameter_um.begin(), sample.diameter_um.end());
  const double d_lo = *lo_it, d_hi = *hi_it;
  const int bits = 30;
  if (model == SphereSizeModel::lsw) {
    // Every section is smaller than the largest sphere, 1.5 × the mean.
    auto neg = [&](double lm) { return -ell(Eigen::VectorXd::Constant(1, lm)); };
    const auto best =
        boost::math::tools::brent_find_minima(neg, std::log(d_hi / 1.5) + 1e-9, std::log(d_hi) + 1.0, bits);
    return Eigen::VectorXd::Constant(1, best.first);
  }
  auto best_median = [&](double ls) {
    auto neg = [&](double lm) { return -ell(Eigen::Vector2d(lm, ls)); };
    return boost::math::tools::brent_find_minima(neg, std::log(d_lo) - 2.0, std::log(d_hi) + 1.0, bits);
  };
  const auto best_sigma = boost::math::tools::brent_find_minima([&](double ls) { return best_median(ls).second; },
                                                                std::log(0.02), std::log(1.5), bits);
  return Eigen::Vector2d(best_median(best_sigma.first).first, best_sigma.first);
}

}  // namespace

SphereSizeFit fit_sphere_sizes(const SectionSample& sample, SphereSizeModel model, int min_sections) {
  if (!(sample.limit_um >= 0)) fail("sphere sizes: the detection limit must be >= 0 µm, got ", sample.limit_um);
  if (!(sample.area_um2 > 0)) fail("sphere sizes: the counted area must be positive, got ", sample.area_um2, " µm²");
  for (double d : sample.diameter_um)
    if (!(d > 0) || !std::isfinite(d)) fail("sphere sizes: a section diameter of ", d, " µm");
  SphereSizeFit fit;
  fit.model = model;
  fit.sections = static_cast<int>(sample.diameter_um.size());
  if (fit.sections < min_sections) {
    fit.reason = "only " + std::to_string(fit.sections) + " resolved sections (at least " +
                 std::to_string(min_sections) + " needed)";
    return fit;
  }
  auto ell = [&](const Eigen::VectorXd& x) { return log_likelihood(sample, sizes_at(model, x)); };
  const Eigen::VectorXd x = maximise(model, sample, ell);
  fit.spheres = sizes_at(model, x);
  fit.log_likelihood = ell(x);
  fit.mean_diameter_um = fit.spheres.mean_um();
  fit.seen_share = section_share_above(fit.spheres, sample.limit_um);
  const double n = fit.sections;
  fit.number_density_per_um3 = n / sample.area_um2 / (fit.mean_diameter_um * fit.seen_share);

  // Intervals from the observed information; the gradients of ln⟨D⟩ and ln(⟨D⟩ S) by differences.
  const double h = 1e-3;
  const Eigen::MatrixXd info = observed_information(ell, x, h);
  Eigen::LLT<Eigen::MatrixXd> llt(info);
  if (llt.info() != Eigen::Success) {
    fit.reason = "the likelihood has no clear maximum (the sections do not fix the distribution)";
    return fit;
  }
  const Eigen::MatrixXd cov = llt.solve(Eigen::MatrixXd::Identity(x.size(), x.size()));
  auto gradient = [&](const std::function<double(const Eigen::VectorXd&)>& q) {
    Eigen::VectorXd g(x.size());
    for (int i = 0; i < x.size(); ++i) {
      Eigen::VectorXd a = x, b = x;
      a[i] += h, b[i] -= h;
      g[i] = (q(a) - q(b)) / (2 * h);
    }
    return g;
  };
  const Eigen::VectorXd g_mean =
      gradient([&](const Eigen::VectorXd& y) { return std::log(sizes_at(model, y).mean_um()); });
  const Eigen::VectorXd g_seen = gradient([&](const Eigen::VectorXd& y) {
    const SphereSizes s = sizes_at(model, y);
    return std::log(s.mean_um() * section_share_above(s, sample.limit_um));
  });
  const Eigen::VectorXd g_section = gradient([&](const Eigen::VectorXd& y) {
    const SphereSizes s = sizes_at(model, y);
    return std::log(s.mean_square_um2() / s.mean_um());
  });
  // A shift common to all diameters moves ⟨D⟩, the mean section and (through ⟨D⟩) N_V by about the
  // same relative amount.
  const double common = std::pow(sample.common_error_sd_um / fit.mean_diameter_um, 2);
  const double se_mean = std::sqrt(g_mean.dot(cov * g_mean) + common);
  const double se_section = std::sqrt(g_section.dot(cov * g_section) + common);
  const double se_density = std::sqrt(1.0 / n + g_seen.dot(cov * g_seen) + common);
  const double z = kNormal95;
  fit.mean_low_um = fit.mean_diameter_um * std::exp(-z * se_mean);
  fit.mean_high_um = fit.mean_diameter_um * std::exp(z * se_mean);
  fit.mean_section_um = M_PI / 4 * fit.spheres.mean_square_um2() / fit.mean_diameter_um;
  fit.mean_section_low_um = fit.mean_section_um * std::exp(-z * se_section);
  fit.mean_section_high_um = fit.mean_section_um * std::exp(z * se_section);
  fit.density_low_per_um3 = fit.number_density_per_um3 * std::exp(-z * se_density);
  fit.density_high_per_um3 = fit.number_density_per_um3 * std::exp(z * se_density);
  if (model == SphereSizeModel::lognormal && (x[1] < std::log(0.02) + 0.01 || x[1] > std::log(1.5) - 0.01)) {
    fit.reason = "the log-normal width ran to the edge of its range (" + std::to_string(fit.spheres.params[1]) + ")";
    return fit;
  }
  if (model == SphereSizeModel::lsw &&
      x[0] < std::log(*std::max_element(sample.diameter_um.begin(), sample.diameter_um.end()) / 1.5) + 0.01) {
    fit.reason = "the largest section sits at the upper end of the LSW distribution: the LSW shape does not fit";
    return fit;
  }
  if (!(se_mean < 1.0)) {
    fit.reason = "the mean diameter is uncertain by more than a factor e";
    return fit;
  }
  fit.determined = true;
  return fit;
}

double standard_error_from_log_interval(double value, double low, double high) {
  if (!(low > 0 && high > low)) return std::nan("");
  return value * std::log(high / low) / (2 * kNormal95);
}

}  // namespace orderband
