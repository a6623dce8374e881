// Coarsening and Arrhenius fits.
#include "orderband/kinetics.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "orderband/distributions.hpp"
#include "orderband/error.hpp"

namespace orderband {
namespace {

struct Line {
  double slope = 0, intercept = 0, slope_se = 0, sse = 0;
  double sxx = 0;  ///< Σ w (x − x̄)²: with weights 1/σ², the slope's variance from the σ alone is 1/sxx
};

/// Weighted least-squares line; the residual variance is estimated from the data (m − 2 dof).
Line fit_line(const std::vector<double>& x, const std::vector<double>& y, std::vector<double> w = {}) {
  const size_t m = x.size();
  if (w.empty()) w.assign(m, 1.0);
  double sw = 0, sx = 0, sy = 0;
  for (size_t i = 0; i < m; ++i) sw += w[i], sx += w[i] * x[i], sy += w[i] * y[i];
  const double mx = sx / sw, my = sy / sw;
  double sxx = 0, sxy = 0;
  for (size_t i = 0; i < m; ++i) sxx += w[i] * (x[i] - mx) * (x[i] - mx), sxy += w[i] * (x[i] - mx) * (y[i] - my);
  Line l;
  l.sxx = sxx;
  if (sxx <= 0) fail("kinetics: all points share one abscissa; need at least two different times or temperatures");
  l.slope = sxy / sxx;
  l.intercept = my - l.slope * mx;
  for (size_t i = 0; i < m; ++i) l.sse += w[i] * std::pow(y[i] - l.intercept - l.slope * x[i], 2);
  l.slope_se = m > 2 ? std::sqrt(l.sse / (m - 2) / sxx) : std::nan("");
  return l;
}

}  // namespace

CoarseningFit fit_coarsening(const std::vector<double>& t, const std::vector<double>& r, double n,
                             const std::vector<double>& radius_se) {
  if (t.size() != r.size() || t.size() < 2) fail("kinetics: need at least two (time, radius) points");
  if (!(n > 0)) fail("kinetics: the coarsening exponent must be positive, got ", n);
  const bool errors_known = !radius_se.empty();
  if (errors_known && radius_se.size() != r.size())
    fail("kinetics: ", radius_se.size(), " radius errors for ", r.size(), " radii");
  // Weights 1/σ² of rⁿ: from the radii's own errors (σ_y = n rⁿ⁻¹ σ_r) where known, else with
  // mean radii taken to scatter by a similar relative amount at every time (σ_y ∝ rⁿ).
  std::vector<double> y, w;
  for (size_t i = 0; i < r.size(); ++i) {
    const double v = r[i];
    if (!(v > 0)) fail("kinetics: mean radius must be positive, got ", v, " µm");
    y.push_back(std::pow(v, n));
    if (errors_known && !(radius_se[i] > 0 && std::isfinite(radius_se[i])))
      fail("kinetics: a radius error must be positive and finite, got ", radius_se[i], " µm");
    w.push_back(errors_known ? std::pow(n * std::pow(v, n - 1) * radius_se[i], -2) : std::pow(v, -2 * n));
  }
  const Line l = fit_line(t, y, w);
  CoarseningFit f;
  f.exponent = n;
  f.exponent_low = f.exponent_high = n;
  f.k = l.slope;
  f.r0_pow_n = l.intercept;
  f.points = static_cast<int>(t.size());
  f.residual_sd = t.size() > 2 ? std::sqrt(l.sse / (t.size() - 2)) : std::nan("");
  // The interval: with the radii's errors known, theirs carried through (normal quantile), widened
  // by the Birge ratio √(χ²/(m − 2)) where the trials scatter more about the line than those errors
  // say (a scale factor on the errors, common practice, no source); with three trials the scatter
  // alone has one degree of freedom and may by chance be far smaller than the errors allow.
  // Without them, the scatter about the line (Student's t, m − 2 degrees of freedom).
  const size_t dof = t.size() - 2;
  if (errors_known) {
    const double birge = dof > 0 ? std::sqrt(std::max(1.0, l.sse / dof)) : 1.0;
    const double half = kNormal95 * birge / std::sqrt(l.sxx);
    f.k_low = l.slope - half, f.k_high = l.slope + half;
    f.k_interval_from_radius_errors = true;
  } else if (dof > 0) {
    const double half = student_t_quantile(0.975, static_cast<int>(dof)) * l.slope_se;
    f.k_low = l.slope - half, f.k_high = l.slope + half;
  } else {
    f.k_low = f.k_high = std::nan("");
  }
  return f;
}

CoarseningFit fit_coarsening_free(const std::vector<double>& t, const std::vector<double>& r) {
  if (t.size() < 4) fail("kinetics: a free exponent needs at least four (time, radius) points, got ", t.size());
  // Relative SSE of the radii for each n, with r0ⁿ and k from the weighted fit at that n
  // (to first order the least-squares solution of the relative residuals).
  auto sse = [&](double n) {
    const CoarseningFit f = fit_coarsening(t, r, n);
    double s = 0;
    for (size_t i = 0; i < t.size(); ++i) {
      const double model = std::pow(std::max(f.r0_pow_n + f.k * t[i], 1e-300), 1 / n);
      s += (r[i] - model) * (r[i] - model) / (r[i] * r[i]);
    }
    return s;
  };
  double best_n = 3, best = std::numeric_limits<double>::infinity();
  for (double n = 1.0; n <= 6.0 + 1e-9; n += 0.01) {
    const double s = sse(n);
    if (s < best) best = s, best_n = n;
  }
  CoarseningFit f = fit_coarsening(t, r, best_n);
  const int m = static_cast<int>(t.size());
  const double limit = best * (1 + f_quantile(0.95, 1, m - 3) / (m - 3));
  f.exponent_low = best_n, f.exponent_high = best_n;
  for (double n = best_n; n >= 1.0; n -= 0.01) {
    if (sse(n) > limit) break;
    f.exponent_low = n;
  }
  for (double n = best_n; n <= 6.0; n += 0.01) {
    if (sse(n) > limit) break;
    f.exponent_high = n;
  }
  return f;
}

ArrheniusFit fit_arrhenius(const std::vector<double>& tc, const std::vector<double>& k) {
  if (tc.size() != k.size() || tc.size() < 2) fail("Arrhenius fit needs rate constants at two or more temperatures");
  constexpr double R = 8.314462618;  // J/(mol K), CODATA 2018 (exact since the 2019 SI)
  std::vector<double> x, y;
  for (size_t i = 0; i < tc.size(); ++i) {
    if (!(k[i] > 0)) fail("Arrhenius fit: rate constant at ", tc[i], " C is not positive (", k[i], ")");
    x.push_back(1.0 / (tc[i] + 273.15));
    y.push_back(std::log(k[i]));
  }
  const Line l = fit_line(x, y);
  ArrheniusFit a;
  a.points = static_cast<int>(x.size());
  a.activation_kj_mol = -l.slope * R / 1000;
  a.ln_k0 = l.intercept;
  if (x.size() > 2) {
    const double tq = student_t_quantile(0.975, static_cast<int>(x.size()) - 2);
    a.q_low = (-l.slope - tq * l.slope_se) * R / 1000, a.q_high = (-l.slope + tq * l.slope_se) * R / 1000;
  } else {
    a.q_low = a.q_high = std::nan("");
  }
  return a;
}

}  // namespace orderband
