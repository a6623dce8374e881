// The patch mixture (patch_mixture.hpp).
#include "orderband/patch_mixture.hpp"

#include <algorithm>
#include <cmath>

#include "orderband/error.hpp"

namespace orderband {

namespace {

/// The largest coupling per neighbour. The pseudo-likelihood of mean-field labels overrates the
/// coupling (smoothed labels agree with their neighbours more than the true ones do), and the
/// overrating feeds itself: left free, it ran to 2 on one of 16 test fields and froze that field
/// into one class; at 1 (the largest coupling the other 15 fields found was 0.84) the fit holds.
constexpr double kMaxCoupling = 1.0;

bool used(const PatchMixtureInputs& in, size_t k) { return in.region[k] > 0 && !std::isnan(in.value[k]); }

double logistic(double a) { return 1 / (1 + std::exp(-a)); }

/// Per used point, its used neighbours among the 8 around it in the same region (CSR lists).
struct Neighbours {
  std::vector<size_t> offset, index;
};

Neighbours neighbours_of(const PatchMixtureInputs& in) {
  const size_t n = in.value.size();
  const long cols = in.cols, rows = static_cast<long>(n) / cols;
  Neighbours nb;
  nb.offset.assign(n + 1, 0);
  for (size_t k = 0; k < n; ++k) {
    nb.offset[k + 1] = nb.offset[k];
    if (!used(in, k)) continue;
    const long r = static_cast<long>(k) / cols, c = static_cast<long>(k) % cols;
    for (long dr = -1; dr <= 1; ++dr)
      for (long dc = -1; dc <= 1; ++dc) {
        const long rr = r + dr, cc = c + dc;
        if ((dr == 0 && dc == 0) || rr < 0 || rr >= rows || cc < 0 || cc >= cols) continue;
        const size_t j = static_cast<size_t>(rr * cols + cc);
        if (used(in, j) && in.region[j] == in.region[k]) nb.index.push_back(j), ++nb.offset[k + 1];
      }
  }
  return nb;
}

/// Σ_b (2 q_b − 1) over a point's neighbours: how strongly they lean to the upper class.
double neighbour_lean(const Neighbours& nb, const std::vector<double>& q, size_t k) {
  double m = 0;
  for (size_t e = nb.offset[k]; e < nb.offset[k + 1]; ++e) m += 2 * q[nb.index[e]] - 1;
  return m;
}

/// E step: sweeps of the mean-field equations q_k = σ(h + J·lean_k + log-likelihood ratio_k).
void mean_field_sweeps(const PatchMixtureInputs& in, const Neighbours& nb, const PatchMixture& fit,
                       std::vector<double>& q) {
  const double var2 = 2 * fit.sd * fit.sd;
  for (int sweep = 0; sweep < 5; ++sweep)
    for (size_t k = 0; k < q.size(); ++k) {
      if (!used(in, k)) continue;
      const double e = in.value[k] - fit.zero[in.region[k]];
      const double ratio = (e * e - (e - fit.scale) * (e - fit.scale)) / var2;
      q[k] = logistic(fit.field + fit.coupling * neighbour_lean(nb, q, k) + ratio);
    }
}

/// M step for the levels: zeros per region, the common scale and the common noise minimise the
/// weighted squares Σ (1 − q)(v − z)² + q (v − z − scale)². Given the scale each zero is
/// z = (Σv − scale·Σq) / n over its region; put into the scale's equation this gives the scale in
/// closed form: (Σ q v − Σ_r Σq_r Σv_r / n_r) / (Σ q − Σ_r (Σq_r)² / n_r).
void fit_levels(const PatchMixtureInputs& in, const std::vector<double>& q, PatchMixture& fit) {
  const size_t n = q.size();
  std::vector<double> sum_v(in.regions + 1, 0.0), sum_q(in.regions + 1, 0.0), count(in.regions + 1, 0.0);
  double sum_qv = 0, total_q = 0;
  for (size_t k = 0; k < n; ++k)
    if (used(in, k)) {
      const int r = in.region[k];
      sum_v[r] += in.value[k], sum_q[r] += q[k], count[r] += 1, sum_qv += q[k] * in.value[k], total_q += q[k];
    }
  double num = sum_qv, den = total_q;
  for (int r = 1; r <= in.regions; ++r)
    if (count[r] > 0) num -= sum_q[r] * sum_v[r] / count[r], den -= sum_q[r] * sum_q[r] / count[r];
  // den = 0: q constant within every region, so the scale is not determined by the levels.
  fit.scale = den > 1e-12 * total_q ? num / den : 0.0;
  for (int r = 1; r <= in.regions; ++r)
    fit.zero[r] = count[r] > 0 ? (sum_v[r] - fit.scale * sum_q[r]) / count[r] : std::nan("");
  double ss = 0, total = 0;
  for (size_t k = 0; k < n; ++k) {
    if (!used(in, k)) continue;
    const double e = in.value[k] - fit.zero[in.region[k]];
    ss += (1 - q[k]) * e * e + q[k] * (e - fit.scale) * (e - fit.scale), total += 1;
  }
  fit.sd = std::sqrt(ss / std::max(total, 1.0));
}

/// M step for the prior: h and J maximise Σ_k q_k log σ(a_k) + (1 − q_k) log(1 − σ(a_k)),
/// a_k = h + J·lean_k (Newton steps on the two parameters).
void fit_prior(const PatchMixtureInputs& in, const Neighbours& nb, const std::vector<double>& q, PatchMixture& fit) {
  std::vector<double> lean(q.size(), 0.0);
  for (size_t k = 0; k < q.size(); ++k)
    if (used(in, k)) lean[k] = neighbour_lean(nb, q, k);
  for (int step = 0; step < 20; ++step) {
    double g0 = 0, g1 = 0, h00 = 0, h01 = 0, h11 = 0;
    for (size_t k = 0; k < q.size(); ++k) {
      if (!used(in, k)) continue;
      const double p = logistic(fit.field + fit.coupling * lean[k]), w = p * (1 - p);
      g0 += q[k] - p, g1 += (q[k] - p) * lean[k];
      h00 += w, h01 += w * lean[k], h11 += w * lean[k] * lean[k];
    }
    const double det = h00 * h11 - h01 * h01;
    if (!(det > 1e-12 * (1 + h00 * h11))) break;
    const double dh = (h11 * g0 - h01 * g1) / det, dj = (h00 * g1 - h01 * g0) / det;
    fit.field += dh, fit.coupling = std::clamp(fit.coupling + dj, 0.0, kMaxCoupling);
    if (std::abs(dh) + std::abs(dj) < 1e-9) break;
  }
}

/// The mean probability of the upper class over the points fitted (0 where none is).
double upper_share(const PatchMixtureInputs& in, const std::vector<double>& q) {
  double share = 0, count = 0;
  for (size_t k = 0; k < q.size(); ++k)
    if (used(in, k)) share += q[k], count += 1;
  return count > 0 ? share / count : 0.0;
}

/// A start from the given upper-class probabilities: the levels they imply, no prior yet.
PatchMixture start_of(const PatchMixtureInputs& in, std::vector<double>& q) {
  PatchMixture fit;
  fit.zero.assign(in.regions + 1, std::nan(""));
  for (size_t k = 0; k < q.size(); ++k) q[k] = used(in, k) ? std::clamp(in.start_upper[k], 0.0, 1.0) : std::nan("");
  fit_levels(in, q, fit);
  const double share = std::clamp(upper_share(in, q), 0.01, 0.99);
  fit.field = std::log(share / (1 - share));
  return fit;
}

}  // namespace

PatchMixture fit_patch_mixture(const PatchMixtureInputs& in) {
  const size_t n = in.value.size();
  if (in.region.size() != n || in.start_upper.size() != n) fail("patch mixture: inconsistent input sizes");
  if (in.cols <= 0 || n % static_cast<size_t>(in.cols) != 0) fail("patch mixture: points must fill whole rows");
  const Neighbours nb = neighbours_of(in);
  std::vector<double> q(n);
  PatchMixture fit = start_of(in, q);
  if (!(fit.sd > 0)) return fit;
  for (fit.iterations = 1; fit.iterations <= in.max_iterations; ++fit.iterations) {
    const PatchMixture last = fit;
    mean_field_sweeps(in, nb, fit, q);
    fit_levels(in, q, fit);
    fit_prior(in, nb, q, fit);
    if (!(fit.sd > 0)) break;
    const double tol = 1e-7 * fit.sd;
    fit.converged = std::abs(fit.scale - last.scale) < tol && std::abs(fit.sd - last.sd) < tol &&
                    std::abs(fit.coupling - last.coupling) < 1e-6;
    if (fit.converged) break;
  }
  fit.iterations = std::min(fit.iterations, in.max_iterations);
  fit.upper_share = upper_share(in, q);
  fit.upper = std::move(q);
  return fit;
}

}  // namespace orderband
