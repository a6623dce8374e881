// The data-led ordered fraction (see learned_fraction.hpp for the steps).
#include "orderband/learned_fraction.hpp"

#include <algorithm>
#include <array>
#include <cmath>

#include <Eigen/Dense>

#include "orderband/error.hpp"
#include "orderband/ordered_fraction.hpp"

namespace orderband {
namespace {

bool measured(const LearnedInputs& in, size_t k) { return in.grain[k] > 0; }

/// Per grain (index g) the mean of `v` over the grain's measured points where `use` holds.
std::vector<double> grain_means(const LearnedInputs& in, const std::vector<double>& v,
                                const std::vector<uint8_t>& use) {
  std::vector<double> sum(in.grains + 1, 0.0), cnt(in.grains + 1, 0.0);
  for (size_t k = 0; k < in.points; ++k)
    if (measured(in, k) && use[k] && !std::isnan(v[k])) sum[in.grain[k]] += v[k], cnt[in.grain[k]] += 1;
  for (int g = 0; g <= in.grains; ++g) sum[g] = cnt[g] > 0 ? sum[g] / cnt[g] : std::nan("");
  return sum;
}

struct LearnedDirection {
  Eigen::VectorXd w, delta;
  bool ok = false;
};

/// The discriminant direction learned on the points of one fold: per grain and class the feature
/// means, the pooled class difference and the pooled within-class covariance (shrunk toward its
/// diagonal), w = Σ⁻¹ Δ.
LearnedDirection learn_direction(const LearnedInputs& in, const std::vector<uint8_t>& label, int train_fold,
                                 const std::vector<std::vector<double>>& feature_mean, const LearnedSpec& spec) {
  const size_t p = in.features;
  const int G = in.grains;
  std::vector<Eigen::VectorXd> sum[2];
  std::vector<Eigen::VectorXd> cnt[2];
  for (int c = 0; c < 2; ++c) {
    sum[c].assign(G + 1, Eigen::VectorXd::Zero(p));
    cnt[c].assign(G + 1, Eigen::VectorXd::Zero(p));
  }
  auto value = [&](size_t k, size_t b) {
    const float v = in.x[k * p + b];
    return std::isnan(v) ? feature_mean[in.grain[k]][b] : static_cast<double>(v);
  };
  std::vector<size_t> train;
  for (size_t k = 0; k < in.points; ++k)
    if (measured(in, k) && in.fold[k] == train_fold) train.push_back(k);
  for (size_t k : train) {
    const int g = in.grain[k], c = label[k];
    for (size_t b = 0; b < p; ++b) {
      const float v = in.x[k * p + b];
      if (std::isnan(v)) continue;
      sum[c][g][b] += v, cnt[c][g][b] += 1;
    }
  }
  LearnedDirection d;
  d.delta = Eigen::VectorXd::Zero(p);
  Eigen::VectorXd h = Eigen::VectorXd::Zero(p);
  std::vector<Eigen::VectorXd> mean[2];
  for (int c = 0; c < 2; ++c) mean[c].assign(G + 1, Eigen::VectorXd::Zero(p));
  for (int g = 1; g <= G; ++g)
    for (size_t b = 0; b < p; ++b) {
      for (int c = 0; c < 2; ++c) mean[c][g][b] = cnt[c][g][b] > 0 ? sum[c][g][b] / cnt[c][g][b] : feature_mean[g][b];
      const double n0 = cnt[0][g][b], n1 = cnt[1][g][b];
      if (n0 < spec.min_class_points || n1 < spec.min_class_points) continue;
      const double hg = n0 * n1 / (n0 + n1);
      d.delta[b] += hg * (mean[1][g][b] - mean[0][g][b]);
      h[b] += hg;
    }
  for (size_t b = 0; b < p; ++b) d.delta[b] = h[b] > 0 ? d.delta[b] / h[b] : 0.0;
  if (!(d.delta.squaredNorm() > 0)) return d;
  // Within-class covariance from at most 20,000 training points (evenly spread).
  const size_t stride = std::max<size_t>(1, train.size() / 20000);
  Eigen::MatrixXd s = Eigen::MatrixXd::Zero(p, p);
  Eigen::VectorXd r(p);
  double used = 0;
  for (size_t i = 0; i < train.size(); i += stride) {
    const size_t k = train[i];
    const int g = in.grain[k], c = label[k];
    for (size_t b = 0; b < p; ++b) r[b] = value(k, b) - mean[c][g][b];
    s.selfadjointView<Eigen::Lower>().rankUpdate(r);
    used += 1;
  }
  if (used < 2) return d;
  s = s.selfadjointView<Eigen::Lower>();
  s /= used;
  Eigen::MatrixXd sigma = (1 - spec.shrinkage) * s;
  const double ridge = 1e-6 * s.diagonal().mean();
  for (size_t b = 0; b < p; ++b) sigma(b, b) = s(b, b) + ridge;
  d.w = sigma.ldlt().solve(d.delta);
  d.ok = d.w.allFinite();
  return d;
}

/// Per grain, the mean of every feature over its points (missing bins take it) and how many
/// points cover each bin.
struct GrainFeatures {
  std::vector<std::vector<double>> mean, count;
};

GrainFeatures grain_features(const LearnedInputs& in) {
  const size_t p = in.features;
  GrainFeatures gf{std::vector<std::vector<double>>(in.grains + 1, std::vector<double>(p, 0.0)),
                   std::vector<std::vector<double>>(in.grains + 1, std::vector<double>(p, 0.0))};
  for (size_t k = 0; k < in.points; ++k) {
    if (!measured(in, k)) continue;
    for (size_t b = 0; b < p; ++b)
      if (const float v = in.x[k * p + b]; !std::isnan(v)) gf.mean[in.grain[k]][b] += v, gf.count[in.grain[k]][b] += 1;
  }
  for (int g = 1; g <= in.grains; ++g)
    for (size_t b = 0; b < p; ++b) gf.mean[g][b] = gf.count[g][b] > 0 ? gf.mean[g][b] / gf.count[g][b] : 0.0;
  return gf;
}

/// Scores of every point with the direction learned on the other fold, in units of the learned
/// difference over the bins the point's grain covers. False if no direction could be learned.
bool cross_fitted_scores(const LearnedInputs& in, const std::vector<uint8_t>& label, const GrainFeatures& gf,
                         const LearnedSpec& spec, std::vector<double>& score, std::vector<double>& difference) {
  const size_t p = in.features;
  for (int fold = 0; fold < 2; ++fold) {
    const LearnedDirection d = learn_direction(in, label, 1 - fold, gf.mean, spec);
    if (!d.ok) return false;
    if (fold == 0) difference.assign(d.delta.data(), d.delta.data() + p);
    std::vector<double> unit(in.grains + 1, 0.0);
    for (int g = 1; g <= in.grains; ++g)
      for (size_t b = 0; b < p; ++b)
        if (gf.count[g][b] > 0) unit[g] += d.w[b] * d.delta[b];
    for (size_t k = 0; k < in.points; ++k) {
      if (!measured(in, k) || in.fold[k] != fold) continue;
      const int g = in.grain[k];
      double t = 0;
      for (size_t b = 0; b < p; ++b)
        if (const float v = in.x[k * p + b]; !std::isnan(v)) t += d.w[b] * (v - gf.mean[g][b]);
      score[k] = unit[g] > 0 ? t / unit[g] : std::nan("");
    }
  }
  return true;
}

struct Placement {
  std::array<EndMember, 2> mix{};  ///< of the anchored scores: pure matrix, pure ordered
  double beta = 0;                 ///< score units per unit fraction
};

/// Places the scores between the end members: each grain's matrix points' mean score is its zero
/// (a grain that is mostly ordered, such as a primary particle with its own orientation, anchors its
/// mean at 1); the pure matrix and pure ordered levels are the two Gaussian components of a
/// mixture of the anchored scores pooled over grains (the matrix mean carries the mixed points at
/// particle edges). Writes f per point.
Placement place_scores(const LearnedInputs& in, const std::vector<uint8_t>& label, const std::vector<double>& score,
                       std::vector<double>& f) {
  const size_t n = in.points;
  const int G = in.grains;
  std::vector<uint8_t> matrix(n, 0), all(n, 1);
  for (size_t k = 0; k < n; ++k) matrix[k] = measured(in, k) && !label[k];
  const std::vector<double> matrix_t = grain_means(in, score, matrix), grain_t = grain_means(in, score, all);
  std::vector<double> share(G + 1, 0.0), size(G + 1, 0.0);
  for (size_t k = 0; k < n; ++k)
    if (measured(in, k)) share[in.grain[k]] += label[k], size[in.grain[k]] += 1;
  std::vector<uint8_t> mostly_ordered(G + 1, 0);
  for (int g = 1; g <= G; ++g) mostly_ordered[g] = size[g] > 0 && share[g] / size[g] > 0.5;
  std::vector<double> y;
  for (size_t k = 0; k < n; ++k) {
    const int g = in.grain[k];
    if (!measured(in, k) || std::isnan(score[k]) || mostly_ordered[g] || std::isnan(matrix_t[g])) continue;
    y.push_back(score[k] - matrix_t[g]);
  }
  Placement pl;
  pl.mix = two_component_mixture(y);
  const double zero = pl.mix[0].mean;
  pl.beta = pl.mix[1].mean - zero > 0 ? pl.mix[1].mean - zero : 1.0;
  for (size_t k = 0; k < n; ++k) {
    const int g = in.grain[k];
    if (!measured(in, k) || std::isnan(score[k])) continue;
    if (mostly_ordered[g])
      f[k] = 1 + (score[k] - grain_t[g]) / pl.beta;
    else if (!std::isnan(matrix_t[g]))
      f[k] = (score[k] - matrix_t[g] - zero) / pl.beta;
  }
  return pl;
}

/// One phase: which one from the model's first guess (its sign survives a mismatch of scale);
/// every point is that phase.
void report_one_phase(const LearnedInputs& in, LearnedFraction& out) {
  double sum = 0, count = 0;
  for (size_t k = 0; k < in.points; ++k)
    if (measured(in, k) && !std::isnan(in.first_guess[k])) sum += in.first_guess[k], count += 1;
  out.single_phase_ordered = count > 0 && sum / count > 0.5;
  for (size_t k = 0; k < in.points; ++k)
    if (measured(in, k)) out.f[k] = out.single_phase_ordered ? 1.0f : 0.0f, out.uncertainty[k] = 0.0f;
}

}  // namespace

LearnedFraction learn_fraction(const LearnedInputs& in, const LearnedSpec& spec) {
  const size_t n = in.points, p = in.features;
  if (in.grain.size() != n || in.fold.size() != n || in.x.size() != n * p || in.first_guess.size() != n)
    fail("learned fraction: inconsistent input sizes");
  LearnedFraction out;
  out.f.assign(n, std::nanf(""));
  out.uncertainty.assign(n, std::nanf(""));
  const GrainFeatures gf = grain_features(in);
  // 1. First split from the model's guess; then learn, score, place and split again.
  std::vector<uint8_t> label(n, 0);
  for (size_t k = 0; k < n; ++k) label[k] = measured(in, k) && in.first_guess[k] >= 0.5;
  std::vector<double> score(n, std::nan("")), f(n, std::nan(""));
  Placement pl;
  for (int it = 0; it < spec.iterations; ++it) {
    out.iterations_run = it + 1;
    if (!cross_fitted_scores(in, label, gf, spec, score, out.difference)) break;
    pl = place_scores(in, label, score, f);
    for (size_t k = 0; k < n; ++k) label[k] = measured(in, k) && !std::isnan(f[k]) && f[k] >= 0.5;
  }
  // 4. Two phases only if the components are separated.
  const std::array<EndMember, 2>& mix = pl.mix;
  out.scale = pl.beta;
  out.separation = (mix[1].mean - mix[0].mean) / std::sqrt(0.5 * (mix[0].sd * mix[0].sd + mix[1].sd * mix[1].sd));
  out.two_phases = out.separation >= spec.min_separation && mix[1].weight >= spec.min_second_weight &&
                   mix[0].weight >= spec.min_second_weight;
  if (!out.two_phases) {
    report_one_phase(in, out);
    return out;
  }
  for (size_t k = 0; k < n; ++k)
    if (!std::isnan(f[k]))
      out.f[k] = static_cast<float>(f[k]), out.uncertainty[k] = static_cast<float>(mix[0].sd / pl.beta);
  return out;
}

}  // namespace orderband
