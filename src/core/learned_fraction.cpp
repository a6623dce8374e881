// The data-led ordered fraction (see learned_fraction.hpp for the steps).
#include "orderband/learned_fraction.hpp"

#include <algorithm>
#include <array>
#include <cmath>

#include <Eigen/Dense>

#include "orderband/common_view.hpp"
#include "orderband/end_member_mixture.hpp"
#include "orderband/error.hpp"
#include "orderband/ordered_fraction.hpp"
#include "orderband/patch_mixture.hpp"
#include "orderband/spatial_evidence.hpp"

namespace orderband {
namespace {

bool measured(const LearnedInputs& in, size_t k) { return in.grain[k] > 0; }

/// The share of a grain's points each component must hold for the grain to count as two-phase.
constexpr double kMinComponentShare = 0.05;
/// A grain is taken for the ordered phase alone only while its map shows no structure: below this
/// lag-one z (spatial_evidence; a pure phase gives z of about ±1, so 3 is passed by chance in about
/// 1 grain of 700). Reading a whole grain as ordered is the costliest error the first split can
/// make, and the transfer that decides it rests on the model's change between orientations.
constexpr double kOrderedAloneMaxZ = 3.0;
/// Pure-matrix points a grain needs for its zero to come from them (zeros_from_pure_matrix).
constexpr double kMinPureMatrixPoints = 10;

/// A measured point the learning uses: not next to another grain, where the pattern may mix two
/// orientations, nor in a disordered reference region (such points are scored, never learned from).
bool learns(const LearnedInputs& in, size_t k) {
  return measured(in, k) && (in.boundary.empty() || !in.boundary[k]) && (in.reference.empty() || !in.reference[k]);
}

/// Per grain (index g) the mean of `v` over the grain's measured points where `use` holds.
std::vector<double> grain_means(const LearnedInputs& in, const std::vector<double>& v,
                                const std::vector<uint8_t>& use) {
  std::vector<double> sum(in.grains + 1, 0.0), cnt(in.grains + 1, 0.0);
  for (size_t k = 0; k < in.points; ++k)
    if (learns(in, k) && use[k] && !std::isnan(v[k])) sum[in.grain[k]] += v[k], cnt[in.grain[k]] += 1;
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
    if (learns(in, k) && in.fold[k] == train_fold) train.push_back(k);
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

}  // namespace

GrainFeatures grain_features(const LearnedInputs& in) {
  const size_t p = in.features;
  GrainFeatures gf{std::vector<std::vector<double>>(in.grains + 1, std::vector<double>(p, 0.0)),
                   std::vector<std::vector<double>>(in.grains + 1, std::vector<double>(p, 0.0))};
  for (size_t k = 0; k < in.points; ++k) {
    if (!learns(in, k)) continue;
    for (size_t b = 0; b < p; ++b)
      if (const float v = in.x[k * p + b]; !std::isnan(v)) gf.mean[in.grain[k]][b] += v, gf.count[in.grain[k]][b] += 1;
  }
  for (int g = 1; g <= in.grains; ++g)
    for (size_t b = 0; b < p; ++b) gf.mean[g][b] = gf.count[g][b] > 0 ? gf.mean[g][b] / gf.count[g][b] : 0.0;
  return gf;
}

namespace {

/// The leading eigenvector of the symmetrised lag-one cross-covariance of the noise-scaled
/// features (see spatial_direction_scores), from the neighbour pairs of one fold (`fold` < 0: all
/// pairs), already multiplied by the noise scaling; empty if too few pairs.
Eigen::VectorXd spatial_direction(const LearnedInputs& in, const GrainFeatures& gf, int fold) {
  const size_t p = in.features, n = in.points;
  const size_t cols = static_cast<size_t>(in.cols);
  auto in_fold = [&](size_t k) { return fold < 0 || in.fold[k] == fold; };
  // Neighbour pairs inside one grain, both learned from (right and lower neighbour).
  std::vector<std::pair<size_t, size_t>> pairs;
  for (size_t k = 0; k < n; ++k) {
    if (!learns(in, k) || !in_fold(k)) continue;
    const size_t right = k + 1, down = k + cols;
    if ((k + 1) % cols != 0 && right < n && learns(in, right) && in_fold(right) && in.grain[right] == in.grain[k])
      pairs.emplace_back(k, right);
    if (down < n && learns(in, down) && in_fold(down) && in.grain[down] == in.grain[k]) pairs.emplace_back(k, down);
  }
  if (pairs.size() < 2 * p) return {};
  auto centred = [&](size_t k, size_t b) {
    const float v = in.x[k * p + b];
    return std::isnan(v) ? 0.0 : v - gf.mean[in.grain[k]][b];
  };
  // Every feature's noise spread from neighbour differences (half their mean square).
  std::vector<double> noise(p, 0.0), covered(p, 0.0);
  for (const auto& [a, b2] : pairs)
    for (size_t b = 0; b < p; ++b)
      if (!std::isnan(in.x[a * p + b]) && !std::isnan(in.x[b2 * p + b]))
        noise[b] += 0.5 * std::pow(centred(a, b) - centred(b2, b), 2), covered[b] += 1;
  Eigen::VectorXd scale = Eigen::VectorXd::Zero(p);
  for (size_t b = 0; b < p; ++b)
    if (covered[b] >= 0.1 * pairs.size() && noise[b] > 0) scale[b] = 1 / std::sqrt(noise[b] / covered[b]);
  // The lag cross-covariance summed over blocks of pairs: the whole pairs × features matrices would
  // take 2 × 8 bytes per pair and feature (100 MB for a 192 × 192 map of 170 features).
  constexpr size_t kBlock = 1024;
  Eigen::MatrixXd za(kBlock, p), zb(kBlock, p);
  Eigen::MatrixXd lag = Eigen::MatrixXd::Zero(p, p);
  for (size_t start = 0; start < pairs.size(); start += kBlock) {
    const size_t m = std::min(kBlock, pairs.size() - start);
    for (size_t i = 0; i < m; ++i)
      for (size_t b = 0; b < p; ++b) {
        const auto& [first, second] = pairs[start + i];
        za(i, b) = scale[b] * centred(first, b), zb(i, b) = scale[b] * centred(second, b);
      }
    lag.noalias() += za.topRows(m).transpose() * zb.topRows(m);
  }
  lag = 0.5 * (lag + lag.transpose()) / static_cast<double>(pairs.size());
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(lag);
  if (eig.info() != Eigen::Success) return {};
  return eig.eigenvectors().col(p - 1).cwiseProduct(scale);
}

/// Writes the score along `w` (grain means removed) of every measured point of `fold` (< 0: all).
void score_along(const LearnedInputs& in, const GrainFeatures& gf, const Eigen::VectorXd& w, int fold,
                 std::vector<double>& score) {
  const size_t p = in.features;
  for (size_t k = 0; k < in.points; ++k) {
    if (!measured(in, k) || (fold >= 0 && in.fold[k] != fold)) continue;
    double t = 0;
    for (size_t b = 0; b < p; ++b)
      if (const float v = in.x[k * p + b]; !std::isnan(v)) t += w[b] * (v - gf.mean[in.grain[k]][b]);
    score[k] = t;
  }
}

/// The spatial direction cross-fitted: each fold's points scored along the direction learned from
/// the other fold's pairs, so that no point's own noise shapes the direction it is tested along
/// (the eigenvector of one fold's lag covariance would otherwise find lag correlation in pure
/// noise). Empty if either fold has too few pairs.
std::vector<double> cross_fitted_spatial_scores(const LearnedInputs& in, const GrainFeatures& gf) {
  if (in.cols <= 0 || in.points == 0 || in.features == 0) return {};
  std::vector<double> score(in.points, std::nan(""));
  for (int fold = 0; fold < 2; ++fold) {
    const Eigen::VectorXd w = spatial_direction(in, gf, 1 - fold);
    if (w.size() == 0) return {};
    score_along(in, gf, w, fold, score);
  }
  return score;
}

/// Whether another grain lies within the beam's reach of point k: its pattern may then hold that
/// grain's lattice, which fades with the distance from the boundary and would read as structure.
bool near_other_grain(const LearnedInputs& in, size_t k) {
  const long cols = in.cols, rows = static_cast<long>(in.points) / cols;
  const long r = static_cast<long>(k) / cols, c = static_cast<long>(k) % cols;
  for (long i = std::max(0L, r - in.reach_rows); i <= std::min(rows - 1, r + in.reach_rows); ++i)
    for (long j = std::max(0L, c - in.reach_cols); j <= std::min(cols - 1, c + in.reach_cols); ++j)
      if (const int g = in.grain[static_cast<size_t>(i * cols + j)]; g > 0 && g != in.grain[k]) return true;
  return false;
}

/// Per point its grain where the learning uses it and no other grain reaches it, else 0: the
/// regions the structure is tested over.
std::vector<int> structure_regions(const LearnedInputs& in) {
  std::vector<int> region(in.points, 0);
  for (size_t k = 0; k < in.points; ++k)
    if (learns(in, k) && !near_other_grain(in, k)) region[k] = in.grain[k];
  return region;
}

/// The lag evidence of `v` over `region`, grain by grain (spatial_evidence), with pairs inside one
/// fold when `folds` is set.
SpatialEvidence structure_of(const LearnedInputs& in, const std::vector<int>& region, const std::vector<double>& v,
                             bool folds) {
  SpatialEvidenceInputs se;
  se.cols = in.cols, se.regions = in.grains, se.value = v, se.region = region;
  if (folds) se.fold = in.fold;
  return spatial_evidence(se);
}

}  // namespace

std::vector<double> spatial_direction_scores(const LearnedInputs& in, const GrainFeatures& gf) {
  if (in.cols <= 0 || in.points == 0 || in.features == 0) return {};
  const Eigen::VectorXd w = spatial_direction(in, gf, -1);
  if (w.size() == 0) return {};
  std::vector<double> score(in.points, std::nan(""));
  score_along(in, gf, w, -1, score);
  return score;
}

SpatialEvidence scan_structure(const LearnedInputs& in, const GrainFeatures& gf) {
  if (in.cols <= 0) return {std::vector<double>(in.grains + 1, 0.0), 0.0, std::vector<size_t>(in.grains + 1, 0)};
  const std::vector<int> region = structure_regions(in);
  SpatialEvidence out = structure_of(in, region, in.first_guess, false);
  if (const std::vector<double> cross = cross_fitted_spatial_scores(in, gf); !cross.empty()) {
    const SpatialEvidence data = structure_of(in, region, cross, true);
    for (int g = 1; g <= in.grains; ++g) out.z[g] = std::max(out.z[g], data.z[g]);
    out.pooled = std::max(out.pooled, data.pooled);
  }
  return out;
}

namespace {

/// The sign of a direction's scores: the features regressed on the scores (each grain's means
/// removed) give the difference that one unit of score makes; its projection on the grain's
/// ordering signature (LearnedInputs::ordering_signature) is positive when the scores rise with
/// ordering. 0 when no signature is given.
double ordering_sign(const LearnedInputs& in, const GrainFeatures& gf, const std::vector<double>& score) {
  if (in.ordering_signature.size() != static_cast<size_t>(in.grains) + 1) return 0;
  const size_t p = in.features;
  std::vector<double> ms(in.grains + 1, 0.0), cnt(in.grains + 1, 0.0);
  for (size_t k = 0; k < in.points; ++k)
    if (learns(in, k) && !std::isnan(score[k])) ms[in.grain[k]] += score[k], cnt[in.grain[k]] += 1;
  for (int g = 1; g <= in.grains; ++g) ms[g] = cnt[g] > 0 ? ms[g] / cnt[g] : 0.0;
  double shown = 0;
  for (size_t k = 0; k < in.points; ++k) {
    if (!learns(in, k) || std::isnan(score[k])) continue;
    const int g = in.grain[k];
    const double ds = score[k] - ms[g];
    const std::vector<double>& signature = in.ordering_signature[g];
    if (signature.size() != p) continue;
    for (size_t b = 0; b < p; ++b)
      if (const float v = in.x[k * p + b]; !std::isnan(v) && signature[b] != 0)
        shown += signature[b] * ds * (v - gf.mean[g][b]);
  }
  return shown > 0 ? 1.0 : shown < 0 ? -1.0 : 0.0;
}

/// The model's first guess carried by the scan's own direction: per grain, the guess regressed on
/// the spatial scores (one common slope, a level per grain), and every point's guess replaced by
/// its fitted value. The sign comes from the ordering signature (ordering_sign), the model keeps
/// the grains' levels (used only where no grain shows two components); the point-to-point
/// variation comes from the data's direction, far less noisy than the model's projection where the
/// model's intensities are wrong. The model's guess where no spatial score is known.
std::vector<double> guess_along_spatial_direction(const LearnedInputs& in, const GrainFeatures& gf,
                                                  const std::vector<double>& spatial) {
  std::vector<double> guess = in.first_guess;
  if (spatial.empty()) return guess;
  const int G = in.grains;
  std::vector<double> ms(G + 1, 0.0), mg(G + 1, 0.0), cnt(G + 1, 0.0);
  auto usable = [&](size_t k) { return learns(in, k) && !std::isnan(spatial[k]) && !std::isnan(in.first_guess[k]); };
  for (size_t k = 0; k < in.points; ++k)
    if (usable(k)) ms[in.grain[k]] += spatial[k], mg[in.grain[k]] += in.first_guess[k], cnt[in.grain[k]] += 1;
  for (int g = 1; g <= G; ++g)
    if (cnt[g] > 0) ms[g] /= cnt[g], mg[g] /= cnt[g];
  double sxy = 0, sxx = 0;
  for (size_t k = 0; k < in.points; ++k) {
    if (!usable(k)) continue;
    const double ds = spatial[k] - ms[in.grain[k]];
    sxy += ds * (in.first_guess[k] - mg[in.grain[k]]), sxx += ds * ds;
  }
  if (!(sxx > 0)) return guess;
  // The sign from the ordering signature where it is given; the magnitude from the regression (1
  // spatial unit per guess unit where the model's guess does not vary with the scores at all).
  double slope = sxy / sxx;
  if (const double sign = ordering_sign(in, gf, spatial); sign != 0)
    slope = sign * (slope != 0 ? std::abs(slope) : 1.0);
  if (slope == 0) return guess;
  for (size_t k = 0; k < in.points; ++k) {
    const int g = in.grain[k];
    if (measured(in, k) && !std::isnan(spatial[k]) && cnt[g] > 0) guess[k] = mg[g] + slope * (spatial[k] - ms[g]);
  }
  return guess;
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

/// The evidence for a second component in `v`: ΔBIC = 2 (ℓ₂ − ℓ₁) − 3 ln N between the fitted
/// end-member mixture (`mix`, in the units of `v`, MixedPoints::broad) and one Gaussian + a uniform
/// share over the central 99 % of the values, fitted here by EM. Above 10 is "very strong" evidence on the scale of
/// Kass & Raftery, J. Am. Stat. Assoc. 90 (1995) 773 (from memory). A distance measure cannot tell one phase from two
/// at the separations real patterns give: at d′ ≈ 3.5 between pure points, the two halves of one phase's noise lie
/// about as far apart, in their own spreads, as the two phases.
double second_component_evidence(const std::vector<double>& v, const EndMemberMixture& mix) {
  const size_t n = v.size();
  if (n < 8) return 0;
  std::vector<double> sorted = v;  // for the median below
  std::nth_element(sorted.begin(), sorted.begin() + static_cast<std::ptrdiff_t>(n / 2), sorted.end());
  // The alternative's uniform share spans the same central 99 % as the fitted mixture's.
  const double lo = mix.central_lo, hi = mix.central_hi, range = std::max(hi - lo, 1e-12);
  auto gauss = [](double x, const EndMember& c) {
    return c.weight / (c.sd * std::sqrt(2 * M_PI)) * std::exp(-0.5 * std::pow((x - c.mean) / c.sd, 2));
  };
  auto uniform = [&](double x, double w) { return x >= lo && x <= hi ? w / range : 0.0; };
  double l2 = 0;
  for (double x : v) l2 += std::log(std::max(mix.density(x), 1e-300));
  // One Gaussian + uniform, from the median and the scaled median absolute deviation.
  EndMember one{sorted[n / 2], 0, 0.9};
  std::vector<double> dev(n);
  for (size_t k = 0; k < n; ++k) dev[k] = std::abs(v[k] - one.mean);
  std::nth_element(dev.begin(), dev.begin() + n / 2, dev.end());
  one.sd = std::max(1.4826 * dev[n / 2], 1e-4 * range);
  std::vector<double> r(n);
  for (int it = 0; it < 200; ++it) {
    double w = 0, m = 0, ss = 0;
    for (size_t k = 0; k < n; ++k) {
      const double g = gauss(v[k], one);
      r[k] = g / std::max(g + uniform(v[k], 1 - one.weight), 1e-300);
      w += r[k], m += r[k] * v[k];
    }
    if (w < 1e-9) break;
    m /= w;
    for (size_t k = 0; k < n; ++k) ss += r[k] * (v[k] - m) * (v[k] - m);
    const EndMember next{m, std::max(std::sqrt(ss / w), 1e-4 * range), std::min(w / n, 1 - 1e-6)};
    const bool done = std::abs(next.mean - one.mean) < 1e-10 * range && std::abs(next.sd - one.sd) < 1e-10 * range;
    one = next;
    if (done) break;
  }
  double l1 = 0;
  for (double x : v) l1 += std::log(std::max(gauss(x, one) + uniform(x, 1 - one.weight), 1e-300));
  return 2 * (l2 - l1) - 3 * std::log(static_cast<double>(n));
}

/// The grains' zeros z_g and the common scale β refined together by EM on the learners' scores:
/// s = z_g + β·φ + noise, φ = 0 (matrix), 1 (ordered) or spread evenly between them (points that
/// mix both phases under the beam; their noise enters too, so the component is the uniform
/// density convolved with the noise), the noise's spread shared, the three shares per grain. A grain
/// of the ordered phase alone has no matrix component, so its zero follows from β. Labels are not
/// used: at the separations one pattern gives (d′ ≈ 3) a labelled point's class is too often wrong
/// for class means to place the end members. Returns the noise's spread, in score units.
double refine_zeros_and_scale(const LearnedInputs& in, const std::vector<double>& score,
                              const std::vector<uint8_t>& ordered_alone, const std::vector<uint8_t>& two_phase,
                              std::vector<double>& z, double& beta) {
  std::vector<double> last_z = z;
  double last_beta = beta;
  const int G = in.grains;
  std::vector<std::array<double, 3>> share(G + 1, {0.6, 0.3, 0.1});
  for (int g = 1; g <= G; ++g)
    if (ordered_alone[g]) share[g] = {0.0, 0.9, 0.1};
  double sd = 0.3 * beta, last_sd = sd;
  std::vector<std::array<double, 3>> resp(in.points);  // per point: matrix, ordered, mixed
  for (int it = 0; it < 100; ++it) {
    std::vector<double> zs(G + 1, 0.0), zn(G + 1, 0.0);
    std::vector<std::array<double, 3>> sum(G + 1, {0, 0, 0});
    double bs = 0, bn = 0, ss = 0, sn = 0, ordered = 0, two_phase_points = 0;
    for (size_t k = 0; k < in.points; ++k) {
      const int g = in.grain[k];
      if (!learns(in, k) || std::isnan(score[k]) || std::isnan(z[g])) continue;
      const double u = (score[k] - z[g]) / beta;  // in units of the scale
      const double s = sd / beta;
      const double p0 = share[g][0] * std::exp(-0.5 * u * u / (s * s)) / (s * std::sqrt(2 * M_PI));
      const double p1 = share[g][1] * std::exp(-0.5 * (u - 1) * (u - 1) / (s * s)) / (s * std::sqrt(2 * M_PI));
      // Mixed points are spread evenly between the end members and carry the same noise.
      const double pm = share[g][2] * 0.5 * (std::erf(u / (s * M_SQRT2)) - std::erf((u - 1) / (s * M_SQRT2)));
      const double total = std::max(p0 + p1 + pm, 1e-300);
      resp[k] = {p0 / total, p1 / total, pm / total};
      for (int c = 0; c < 3; ++c) sum[g][c] += resp[k][c];
      zs[g] += resp[k][0] * score[k] + resp[k][1] * (score[k] - beta), zn[g] += resp[k][0] + resp[k][1];
      if (two_phase[g]) ordered += resp[k][1], two_phase_points += 1;
    }
    // The grains found to hold two phases must keep them: at small separations the scale can run
    // off with the ordered component collapsing onto a few outliers (a likelihood maximum where all
    // but the tail is matrix). The refinement stops at the last step that kept the ordered share of
    // those grains' points at the first split's minimum.
    if (it > 0 && two_phase_points > 0 && ordered < kMinComponentShare * two_phase_points) {
      z = last_z, beta = last_beta, sd = last_sd;
      break;
    }
    last_z = z, last_beta = beta, last_sd = sd;
    for (int g = 1; g <= G; ++g) {
      if (zn[g] > 0) z[g] = zs[g] / zn[g];
      const double t = sum[g][0] + sum[g][1] + sum[g][2];
      if (t > 0) share[g] = {sum[g][0] / t, sum[g][1] / t, sum[g][2] / t};
    }
    for (size_t k = 0; k < in.points; ++k) {
      const int g = in.grain[k];
      if (!learns(in, k) || std::isnan(score[k]) || std::isnan(z[g])) continue;
      if (!ordered_alone[g]) bs += resp[k][1] * (score[k] - z[g]), bn += resp[k][1];
      ss += resp[k][0] * std::pow(score[k] - z[g], 2) + resp[k][1] * std::pow(score[k] - z[g] - beta, 2);
      sn += resp[k][0] + resp[k][1];
    }
    const double next_beta = bn > 0 && bs / bn > 0 ? bs / bn : beta;
    const double next_sd = sn > 0 ? std::sqrt(ss / sn) : sd;
    const bool done = std::abs(next_beta - beta) < 1e-9 * beta && std::abs(next_sd - sd) < 1e-9 * beta;
    beta = next_beta, sd = std::max(next_sd, 1e-6 * beta);
    if (done) break;
  }
  return sd;
}

/// How many of `neighbours` pure-matrix points read ordered (f ≥ 0.5) by their noise alone (its
/// spread `sd` in units of the fraction): the median of that binomial count, the smallest t that
/// at least half the neighbourhoods of pure matrix do not exceed.
int noise_false_alarms(int neighbours, double sd) {
  const double p = 0.5 * std::erfc(0.5 / (sd * M_SQRT2));
  double term = std::pow(1 - p, neighbours), cdf = term;
  int t = 0;
  while (cdf < 0.5 && t < neighbours) {
    term *= (neighbours - t) / (t + 1.0) * p / (1 - p);
    cdf += term, ++t;
  }
  return t;
}

/// Each grain's zero (grains of the ordered phase alone aside) from its pure matrix: the mean score
/// of the points of which no more neighbours within the beam's reach (LearnedInputs::reach_rows,
/// reach_cols; the point itself not judged, so that its own noise does not select it) read ordered
/// at the refined zero and scale than the noise (`noise`, the refinement's spread in score units)
/// alone makes read so in half the neighbourhoods of pure matrix (noise_false_alarms: none where
/// the reach is one step at the suite's noise; on the long footprint's 20 neighbours at d′ 3.5,
/// two, where demanding none had kept 20 of a small grain's 60 pure points and read it +0.085).
/// Points that mix a little particle under the beam read slightly above zero and pull a
/// mixture's matrix component up (a long footprint on a tilted sample makes them common). Kept
/// where at least 10 such points exist (20 had left a 102-point strip on the mixture's zero, its
/// matrix +0.091; its 13 points gave +0.034).
void zeros_from_pure_matrix(const LearnedInputs& in, const std::vector<double>& score,
                            const std::vector<uint8_t>& ordered_alone, double noise, double& beta,
                            std::vector<double>& z) {
  if (in.cols <= 0) return;
  const size_t n = in.points;
  const int rows = static_cast<int>(n / in.cols);
  std::vector<uint8_t> ordered(n, 0), known(n, 0);
  for (size_t k = 0; k < n; ++k) {
    const int g = in.grain[k];
    known[k] = measured(in, k) && !std::isnan(score[k]) && !std::isnan(z[g]);
    ordered[k] = known[k] && (score[k] - z[g]) / beta >= 0.5;
  }
  // Per point: whether its neighbours within reach read as `phase`, but for as many as the noise
  // makes read otherwise (the point itself not judged).
  const int reach_points = (2 * in.reach_rows + 1) * (2 * in.reach_cols + 1) - 1;
  const int tolerated = noise_false_alarms(reach_points, noise / beta);
  auto surrounded_by = [&](size_t k, uint8_t phase) {
    const int r = static_cast<int>(k / in.cols), c = static_cast<int>(k % in.cols);
    int odd = 0;
    for (int dr = -in.reach_rows; dr <= in.reach_rows; ++dr)
      for (int dc = -in.reach_cols; dc <= in.reach_cols; ++dc) {
        const int rr = r + dr, cc = c + dc;
        if ((dr == 0 && dc == 0) || rr < 0 || rr >= rows || cc < 0 || cc >= in.cols) continue;
        const size_t j = static_cast<size_t>(rr) * in.cols + cc;
        if (ordered[j] != phase && (phase || known[j])) ++odd;
      }
    return odd <= tolerated;
  };
  std::vector<double> sum(in.grains + 1, 0.0), count(in.grains + 1, 0.0);
  for (size_t k = 0; k < n; ++k) {
    const int g = in.grain[k];
    if (!learns(in, k) || std::isnan(score[k]) || ordered_alone[g]) continue;
    if (surrounded_by(k, 0)) sum[g] += score[k], count[g] += 1;
  }
  const std::vector<double> old_z = z;
  for (int g = 1; g <= in.grains; ++g)
    if (!ordered_alone[g] && count[g] >= kMinPureMatrixPoints) z[g] = sum[g] / count[g];
  // The ordered level of the refinement is kept: the scale changes by the ordered points' mean
  // shift of their grains' zeros. (The scale from pure particle interiors instead, points whose
  // whole reach reads ordered, came out 8 % low on the default renderer: few particles of a few
  // steps have such interiors.)
  double shift = 0, shift_n = 0;
  for (size_t k = 0; k < n; ++k) {
    const int g = in.grain[k];
    if (learns(in, k) && !std::isnan(score[k]) && !ordered_alone[g] && ordered[k])
      shift += z[g] - old_z[g], shift_n += 1;
  }
  if (!(shift_n > 0 && beta - shift / shift_n > 0)) return;
  const double old_beta = beta;
  beta -= shift / shift_n;
  // A grain of the ordered phase alone keeps its ordered level too: its zero follows the scale.
  for (int g = 1; g <= in.grains; ++g)
    if (ordered_alone[g] && !std::isnan(z[g])) z[g] += old_beta - beta;
}

struct Placement {
  std::array<EndMember, 2> mix{};  ///< of the anchored scores: pure matrix, pure ordered
  double evidence = 0;             ///< for the second component (second_component_evidence)
  double beta = 0;                 ///< score units per unit fraction
};

/// Places the scores between the end members. Start: each grain's zero is the mean score of its
/// matrix points shifted by the lower component of a mixture of these anchored scores pooled over
/// grains, the scale the distance to the upper component (a grain of the ordered phase alone, such
/// as a primary particle with its own orientation, has its mean at 1); then the zeros and the scale
/// are refined jointly (refine_zeros_and_scale). The mixture also gives the evidence for a second
/// phase. Writes f per point.
Placement place_scores(const LearnedInputs& in, const std::vector<uint8_t>& label,
                       const std::vector<uint8_t>& ordered_alone, const std::vector<uint8_t>& two_phase,
                       const std::vector<double>& score, std::vector<double>& f) {
  const size_t n = in.points;
  std::vector<uint8_t> matrix(n, 0), all(n, 1);
  for (size_t k = 0; k < n; ++k) matrix[k] = measured(in, k) && !label[k];
  const std::vector<double> matrix_t = grain_means(in, score, matrix), grain_t = grain_means(in, score, all);
  std::vector<double> y;
  for (size_t k = 0; k < n; ++k) {
    const int g = in.grain[k];
    if (!learns(in, k) || std::isnan(score[k]) || ordered_alone[g] || std::isnan(matrix_t[g])) continue;
    y.push_back(score[k] - matrix_t[g]);
  }
  Placement pl;
  const EndMemberMixture fitted = end_member_mixture(y, MixedPoints::broad);
  pl.mix = fitted.end_members;
  pl.evidence = second_component_evidence(y, fitted);
  const double zero = pl.mix[0].mean;
  pl.beta = pl.mix[1].mean - zero > 0 ? pl.mix[1].mean - zero : 1.0;
  // Start: each grain's zero from its matrix points and the pooled components; then refined jointly.
  std::vector<double> z(in.grains + 1, std::nan(""));
  for (int g = 1; g <= in.grains; ++g) z[g] = ordered_alone[g] ? grain_t[g] - pl.beta : matrix_t[g] + zero;
  const double noise = refine_zeros_and_scale(in, score, ordered_alone, two_phase, z, pl.beta);
  zeros_from_pure_matrix(in, score, ordered_alone, noise, pl.beta, z);
  for (size_t k = 0; k < n; ++k) {
    const int g = in.grain[k];
    if (!measured(in, k) || std::isnan(score[k]) || std::isnan(z[g])) continue;
    f[k] = (score[k] - z[g]) / pl.beta;
  }
  return pl;
}

/// Places the scores by their patches (fit_patch_mixture): each grain's zero, the common scale and
/// the noise from a two-class mixture whose labels follow their neighbours, started from the
/// split's labels; grains of the ordered phase alone are anchored at 1 with that scale. For maps
/// whose classes overlap point by point (d′ about 2 at 48 × 48 px) but span several points: the
/// scores' own mixture then has no second mode, and its upper component falls on a stray. Writes f
/// per point; false (nothing written) where the fit finds no upper class of at least
/// kMinComponentShare of the points.
bool place_by_patches(const LearnedInputs& in, const std::vector<uint8_t>& label,
                      const std::vector<uint8_t>& ordered_alone, const std::vector<double>& score, Placement& pl,
                      std::vector<double>& f) {
  if (in.cols <= 0) return false;
  const size_t n = in.points;
  PatchMixtureInputs pm;
  pm.cols = in.cols, pm.regions = in.grains;
  pm.value.assign(n, std::nan("")), pm.region.assign(n, 0), pm.start_upper.assign(n, 0.0);
  for (size_t k = 0; k < n; ++k) {
    if (!learns(in, k) || std::isnan(score[k]) || ordered_alone[in.grain[k]]) continue;
    pm.value[k] = score[k], pm.region[k] = in.grain[k], pm.start_upper[k] = label[k];
  }
  const PatchMixture fit = fit_patch_mixture(pm);
  if (!(fit.scale > 0) || fit.upper_share < kMinComponentShare || fit.upper_share > 1 - kMinComponentShare)
    return false;
  std::vector<uint8_t> all(n, 1);
  const std::vector<double> grain_t = grain_means(in, score, all);
  std::vector<double> z = fit.zero;
  for (int g = 1; g <= in.grains; ++g)
    if (ordered_alone[g]) z[g] = grain_t[g] - fit.scale;
  for (size_t k = 0; k < n; ++k) {
    const int g = in.grain[k];
    f[k] = measured(in, k) && !std::isnan(score[k]) && !std::isnan(z[g]) ? (score[k] - z[g]) / fit.scale : std::nan("");
  }
  pl.beta = fit.scale;
  pl.mix[0] = {0.0, fit.sd, 1 - fit.upper_share};
  pl.mix[1] = {fit.scale, fit.sd, fit.upper_share};
  return true;
}

/// Whether both components of a placement hold at least spec.min_class_points of the scored points
/// the learning uses: a component of fewer is a stray or two, not a phase.
bool holds_both_components(const LearnedInputs& in, const std::vector<double>& score, const Placement& pl,
                           const LearnedSpec& spec) {
  double scored = 0;
  for (size_t k = 0; k < in.points; ++k) scored += learns(in, k) && !std::isnan(score[k]);
  return std::min(pl.mix[0].weight, pl.mix[1].weight) * scored >= spec.min_class_points;
}

/// The distance of the two components over the spread of the one that holds more points: the
/// minority component can be broadened by the points that mix both phases under the beam (wide
/// where the footprint is long) or be a few points of almost no spread, the majority one is set by
/// the noise; a split of one phase's noise gives two halves about 2.5 apart.
double component_separation(const std::array<EndMember, 2>& mix) {
  const double spread = mix[0].weight >= mix[1].weight ? mix[0].sd : mix[1].sd;
  return spread > 0 ? (mix[1].mean - mix[0].mean) / spread : 0.0;
}

/// The first split of the points and the grains' kinds. Each grain whose guesses hold two
/// components (second_component_evidence ≥ spec.min_evidence, each ≥ 5 % of its points) is split
/// midway between them; a grain whose guesses show two components only in their neighbourhood
/// means (neighbourhood_means) is cut at its matrix level plus the median distance from matrix to
/// cut of the others. A grain of one component holds either phase alone: which one is decided by
/// comparing it with the grains of two components (name_one_phase_grains); without such grains,
/// by the model's level (its mean guess above the cut between the pooled components). The points of
/// a grain of the disordered phase alone are split one by one at its median guess plus the median
/// distance from matrix to cut in the grains of two components (so that the few particles of a
/// grain too sparse to show two components still start as ordered).
struct FirstSplit {
  std::vector<uint8_t> label;          ///< per point: 1 ordered
  std::vector<uint8_t> ordered_grain;  ///< per grain: the ordered phase alone
  std::vector<uint8_t> two_phase;      ///< per grain: two components found
  std::vector<GrainNamedBy> named_by;  ///< per grain of one component: what named it
  std::vector<double> position;        ///< per grain of one component: its position (OnePhaseNames)
};

/// Grains of one component named against the grains of two (name_one_phase_grains), per grain.
struct OnePhaseNames {
  std::vector<uint8_t> ordered;
  std::vector<double> position;        ///< the median position; NaN where none could be taken
  std::vector<GrainNamedBy> named_by;  ///< common_view or model_transfer
};

/// Two components of `v` (fitted in units where its 5th and 95th percentiles are 0 and 1), in the
/// units of `v`, and the evidence for the second one (second_component_evidence).
std::array<EndMember, 2> components(std::vector<double> v, double& evidence) {
  std::array<EndMember, 2> mix{};
  evidence = 0;
  if (v.size() < 8) return mix;
  std::vector<double> sorted = v;
  std::sort(sorted.begin(), sorted.end());
  const double lo = sorted[sorted.size() / 20], hi = sorted[sorted.size() - 1 - sorted.size() / 20];
  const double range = hi > lo ? hi - lo : 1.0;
  for (double& x : v) x = (x - lo) / range;
  const EndMemberMixture fitted = end_member_mixture(v, MixedPoints::broad);
  mix = fitted.end_members;
  evidence = second_component_evidence(v, fitted);
  for (EndMember& m : mix) m.mean = lo + range * m.mean, m.sd *= range;
  return mix;
}

double median_of(std::vector<double> v) {
  if (v.empty()) return std::nan("");
  std::sort(v.begin(), v.end());
  const size_t m = v.size() / 2;
  return v.size() % 2 ? v[m] : 0.5 * (v[m - 1] + v[m]);
}

/// Per grain h of one component and grain g of two (indices = grain ids; NaN elsewhere): h's
/// position between g's classes by the model's change between orientations. The data of g give its
/// matrix X₀ and its particles X₁; the model gives how a disordered grain's features change from g's
/// orientation to h's (M₀,h − M₀,g), scaled per family to the data by the slope of data on model
/// over the grains of two components. With h's base X₀ + b (M₀,h − M₀,g), h's position along g's
/// ordering difference D = X₁ − X₀ is c = (X̄_h − base)·D / D·D over the features of the ordering
/// signature. Only the model's change between orientations enters, not its change with ordering
/// nor its absolute intensities; but the change is the kinematic model's, which profiles a
/// dynamical band wrongly.
std::vector<std::vector<double>> positions_by_model_transfer(const LearnedInputs& in, const GrainFeatures& gf,
                                                             const std::vector<uint8_t>& label,
                                                             const std::vector<uint8_t>& two_phase,
                                                             const std::vector<uint8_t>& one_phase) {
  const size_t p = in.features, bins = in.bins;
  const int G = in.grains;
  std::vector<std::vector<double>> position(G + 1, std::vector<double>(G + 1, std::nan("")));
  if (std::find(one_phase.begin(), one_phase.end(), 1) == one_phase.end()) return position;
  // Class means of the grains of two components (points away from grain boundaries).
  std::vector<std::array<std::vector<double>, 2>> cls(G + 1);
  for (int g = 1; g <= G; ++g)
    if (two_phase[g])
      for (int c = 0; c < 2; ++c) cls[g][c].assign(p, 0.0);
  std::vector<std::array<std::vector<double>, 2>> cnt = cls;
  for (size_t k = 0; k < in.points; ++k) {
    const int g = in.grain[k];
    if (!learns(in, k) || !two_phase[g]) continue;
    for (size_t b = 0; b < p; ++b)
      if (const float v = in.x[k * p + b]; !std::isnan(v)) cls[g][label[k]][b] += v, cnt[g][label[k]][b] += 1;
  }
  for (int g = 1; g <= G; ++g)
    if (two_phase[g])
      for (int c = 0; c < 2; ++c)
        for (size_t b = 0; b < p; ++b) cls[g][c][b] = cnt[g][c][b] >= 3 ? cls[g][c][b] / cnt[g][c][b] : std::nan("");
  // Per family, the slope of data on model over both classes of the grains of two components.
  const size_t families = p / bins;
  std::vector<double> slope(families, 1.0);
  for (size_t f = 0; f < families; ++f) {
    SlopeSums sums;
    for (int g = 1; g <= G; ++g)
      for (int c = 0; c < 2 && two_phase[g]; ++c)
        for (size_t b = f * bins; b < (f + 1) * bins; ++b)
          if (const double x = in.model[g][c][b], y = cls[g][c][b]; !std::isnan(x) && !std::isnan(y)) sums.add(x, y);
    if (const double fitted = sums.slope(); !std::isnan(fitted)) slope[f] = fitted;
  }
  for (int h = 1; h <= G; ++h) {
    if (!one_phase[h]) continue;
    const std::vector<double>& signature = in.ordering_signature[h];
    for (int g = 1; g <= G; ++g) {
      if (!two_phase[g]) continue;
      double num = 0, den = 0;
      for (size_t b = 0; b < p; ++b) {
        if (signature[b] == 0 || gf.count[h][b] == 0) continue;
        const double base = cls[g][0][b] + slope[b / bins] * (in.model[h][0][b] - in.model[g][0][b]);
        const double d = cls[g][1][b] - cls[g][0][b];
        if (std::isnan(base) || std::isnan(d)) continue;
        num += (gf.mean[h][b] - base) * d, den += d * d;
      }
      if (den > 0) position[h][g] = num / den;
    }
  }
  return position;
}

/// Whether grain h, of one component, holds the ordered phase: its position between the classes
/// of every grain g of two components, ordered if the median over the grains g is at least one half.
/// The positions are measured on the grains' mean patterns over the crystal directions both see
/// (LearnedInputs::position_between) where the scan supplies them; the model's transfer between
/// orientations (positions_by_model_transfer) stands in for a grain none of them places.
OnePhaseNames name_one_phase_grains(const LearnedInputs& in, const GrainFeatures& gf, const std::vector<uint8_t>& label,
                                    const std::vector<uint8_t>& two_phase, const std::vector<uint8_t>& one_phase) {
  const int G = in.grains;
  std::vector<std::vector<double>> by_data;
  if (in.position_between) {
    std::vector<uint8_t> cls(in.points, 2);
    for (size_t k = 0; k < in.points; ++k)
      if (learns(in, k) && two_phase[in.grain[k]]) cls[k] = label[k];
    by_data = in.position_between(one_phase, two_phase, cls);
  }
  // The model's transfer only for the grains the data placed against no two-phase grain.
  std::vector<uint8_t> unplaced = one_phase;
  for (int h = 1; h <= G && !by_data.empty(); ++h)
    for (int g = 1; g <= G; ++g)
      if (!std::isnan(by_data[h][g])) unplaced[h] = 0;
  const std::vector<std::vector<double>> by_model = positions_by_model_transfer(in, gf, label, two_phase, unplaced);
  OnePhaseNames names{std::vector<uint8_t>(G + 1, 0), std::vector<double>(G + 1, std::nan("")),
                      std::vector<GrainNamedBy>(G + 1, GrainNamedBy::none)};
  for (int h = 1; h <= G; ++h) {
    if (!one_phase[h]) continue;
    std::vector<double> data, model;
    for (int g = 1; g <= G; ++g) {
      if (!by_data.empty() && !std::isnan(by_data[h][g])) data.push_back(by_data[h][g]);
      if (!std::isnan(by_model[h][g])) model.push_back(by_model[h][g]);
    }
    names.named_by[h] = data.empty() ? GrainNamedBy::model_transfer : GrainNamedBy::common_view;
    const std::vector<double>& c = data.empty() ? model : data;
    names.position[h] = median_of(c);
    names.ordered[h] = !c.empty() && names.position[h] >= 0.5;
  }
  return names;
}

bool transfer_possible(const LearnedInputs& in) {
  if (in.bins == 0 || in.features % in.bins != 0) return false;
  if (in.model.size() != static_cast<size_t>(in.grains) + 1 || in.ordering_signature.size() != in.model.size())
    return false;
  for (int g = 1; g <= in.grains; ++g)
    if (in.model[g][0].size() != in.features || in.model[g][1].size() != in.features ||
        in.ordering_signature[g].size() != in.features)
      return false;
  return true;
}

/// Per point the mean of `v` over its 3 × 3 neighbourhood within its own grain (points the learning
/// uses; NaN elsewhere). Precipitates span several points while the noise of neighbouring points is
/// independent, so the mean keeps the phase contrast of a particle's inner points and divides the
/// noise by up to 3: a grain whose particles are too faint point by point to show two components
/// shows them here. Without known neighbours (cols 0), `v` itself.
std::vector<double> neighbourhood_means(const LearnedInputs& in, const std::vector<double>& v) {
  if (in.cols <= 0) return v;
  const long cols = in.cols, rows = static_cast<long>(in.points) / cols;
  std::vector<double> out(in.points, std::nan(""));
  for (size_t k = 0; k < in.points; ++k) {
    if (!learns(in, k) || std::isnan(v[k])) continue;
    const long r = static_cast<long>(k) / cols, c = static_cast<long>(k) % cols;
    double sum = 0;
    int n = 0;
    for (long i = std::max(0L, r - 1); i <= std::min(rows - 1, r + 1); ++i)
      for (long j = std::max(0L, c - 1); j <= std::min(cols - 1, c + 1); ++j) {
        const size_t q = static_cast<size_t>(i * cols + j);
        if (in.grain[q] != in.grain[k] || !learns(in, q) || std::isnan(v[q])) continue;
        sum += v[q], ++n;
      }
    out[k] = sum / n;
  }
  return out;
}

FirstSplit first_split(const LearnedInputs& in, const GrainFeatures& gf, const std::vector<double>& guess,
                       const SpatialEvidence& structure, const LearnedSpec& spec) {
  const int G = in.grains;
  std::vector<std::vector<double>> per_grain(G + 1), smooth_per_grain(G + 1);
  std::vector<double> pooled;
  for (size_t k = 0; k < in.points; ++k)
    if (learns(in, k) && !std::isnan(guess[k])) pooled.push_back(guess[k]), per_grain[in.grain[k]].push_back(guess[k]);
  const std::vector<double> smooth = neighbourhood_means(in, guess);
  for (size_t k = 0; k < in.points; ++k)
    if (!std::isnan(smooth[k])) smooth_per_grain[in.grain[k]].push_back(smooth[k]);
  FirstSplit split{std::vector<uint8_t>(in.points, 0),
                   std::vector<uint8_t>(G + 1, 0),
                   {},
                   std::vector<GrainNamedBy>(G + 1, GrainNamedBy::none),
                   std::vector<double>(G + 1, std::nan(""))};
  // Grains of two components are cut midway between them.
  std::vector<double> cut(G + 1, std::nan("")), two_cuts, matrix_to_cut;
  std::vector<uint8_t> two_phase(G + 1, 0), one_phase(G + 1, 0), faint(G + 1, 0);
  std::vector<double> faint_matrix(G + 1, std::nan("")), faint_ordered(G + 1, std::nan(""));
  for (int g = 1; g <= G; ++g) {
    double evidence = 0;
    std::array<EndMember, 2> mix = components(per_grain[g], evidence);
    bool shown = evidence >= spec.min_evidence;
    if (!shown) {
      // Point by point too faint: decided on the neighbourhood means, or on the map's structure
      // where even they show one component (few points, d′ ≈ 2 between pure points); the
      // neighbourhood means' matrix component keeps the matrix's mean (a matrix point's neighbours
      // are matrix), the cut above it is set below from the grains that show two components point
      // by point.
      mix = components(smooth_per_grain[g], evidence);
      shown = evidence >= spec.min_evidence || structure.z[g] >= spec.min_spatial_z;
      faint[g] = shown;
      faint_matrix[g] = mix[0].mean, faint_ordered[g] = mix[1].mean;
    }
    two_phase[g] = shown && mix[0].weight >= kMinComponentShare && mix[1].weight >= kMinComponentShare;
    one_phase[g] = !two_phase[g] && !per_grain[g].empty();
    if (two_phase[g] && !faint[g])
      cut[g] = 0.5 * (mix[0].mean + mix[1].mean), two_cuts.push_back(cut[g]),
      matrix_to_cut.push_back(cut[g] - mix[0].mean);
  }
  for (int g = 1; g <= G; ++g)
    if (two_phase[g] && faint[g]) {
      const double offset =
          matrix_to_cut.empty() ? 0.5 * (faint_ordered[g] - faint_matrix[g]) : median_of(matrix_to_cut);
      cut[g] = faint_matrix[g] + offset, two_cuts.push_back(cut[g]);
    }
  for (size_t k = 0; k < in.points; ++k)
    split.label[k] = measured(in, k) && two_phase[in.grain[k]] && guess[k] >= cut[in.grain[k]];
  // Grains of one component: which phase, from the grains of two components if there are any.
  if (!two_cuts.empty() && transfer_possible(in)) {
    const OnePhaseNames names = name_one_phase_grains(in, gf, split.label, two_phase, one_phase);
    split.ordered_grain = names.ordered, split.named_by = names.named_by, split.position = names.position;
    const double offset = median_of(matrix_to_cut);
    for (int g = 1; g <= G; ++g) {
      if (!one_phase[g]) continue;
      if (split.ordered_grain[g] && structure.z[g] >= kOrderedAloneMaxZ) {
        // Structure where the ordered phase alone would have none: the grain holds both phases,
        // too faintly to show two components; cut as the faint grains are.
        split.ordered_grain[g] = 0, two_phase[g] = 1, split.named_by[g] = GrainNamedBy::none;
        if (std::isnan(faint_matrix[g])) {
          double evidence = 0;
          faint_matrix[g] = components(smooth_per_grain[g], evidence)[0].mean;
        }
        cut[g] = faint_matrix[g] + offset;
        continue;
      }
      cut[g] = split.ordered_grain[g] ? -HUGE_VAL : median_of(per_grain[g]) + offset;
    }
  } else {
    double one_cut = median_of(two_cuts);
    if (two_cuts.empty()) {
      double evidence = 0;
      const std::array<EndMember, 2> all = components(pooled, evidence);
      one_cut = 0.5 * (all[0].mean + all[1].mean);
    }
    for (int g = 1; g <= G; ++g) {
      if (!one_phase[g]) continue;
      double mean = 0;
      for (double x : per_grain[g]) mean += x / per_grain[g].size();
      split.ordered_grain[g] = mean >= one_cut, split.named_by[g] = GrainNamedBy::model_level;
      cut[g] = split.ordered_grain[g] ? -HUGE_VAL : one_cut;
    }
  }
  // A grain that holds part of a disordered reference region is not of the ordered phase alone,
  // whatever the transfer between orientations said (on many-beam patterns it took a grain of pure
  // γ, most of it in a γ′-free layer, for ordered): the user knows that it is disordered there.
  std::vector<uint8_t> referenced(G + 1, 0);
  for (size_t k = 0; k < in.reference.size(); ++k)
    if (in.reference[k] && measured(in, k)) referenced[in.grain[k]] = 1;
  for (int g = 1; g <= G; ++g)
    if (split.ordered_grain[g] && referenced[g])
      split.ordered_grain[g] = 0, split.named_by[g] = GrainNamedBy::reference_region,
      cut[g] = matrix_to_cut.empty() ? HUGE_VAL : median_of(per_grain[g]) + median_of(matrix_to_cut);
  // Every grain by its cut, now that each has one (the grains of two components as before).
  for (size_t k = 0; k < in.points; ++k)
    if (measured(in, k)) split.label[k] = guess[k] >= cut[in.grain[k]];
  split.two_phase = two_phase;
  return split;
}

/// How the first split took each grain, into the result (LearnedFraction::grain_kind, named_by,
/// named_position).
void record_grain_kinds(const LearnedInputs& in, const FirstSplit& split, LearnedFraction& out) {
  const int G = in.grains;
  std::vector<uint8_t> placed(G + 1, 0);
  for (size_t k = 0; k < in.points; ++k)
    if (learns(in, k)) placed[in.grain[k]] = 1;
  out.grain_kind.assign(G + 1, GrainKind::not_placed);
  out.named_by = split.named_by;
  out.named_position = split.position;
  for (int g = 1; g <= G; ++g) {
    if (!placed[g]) continue;
    out.grain_kind[g] = split.two_phase[g]       ? GrainKind::two_components
                        : split.ordered_grain[g] ? GrainKind::ordered_alone
                                                 : GrainKind::disordered_alone;
    if (out.grain_kind[g] == GrainKind::two_components) out.named_by[g] = GrainNamedBy::none;
  }
}

/// A grain's level between the model's two phases with the data's own scale: the slope b of the
/// grain's mean features on the model's disordered features over the fundamental families (bands
/// that ordering barely changes fix how bright the model's bands are in these data), then the
/// grain's position along its ordering signature, r = Σ s·(x̄ − b M₀) / (b Σ s²) over the signature's
/// features, each family's mean over them removed: 0 for the disordered phase, 1 for the ordered,
/// where the model's band shapes hold. NaN if the grain's model or features do not allow it.
double scaled_model_level(const LearnedInputs& in, const GrainFeatures& gf, int g) {
  const size_t p = in.features, bins = in.bins;
  const std::vector<double>& x = gf.mean[g];
  const std::vector<double>& m0 = in.model[g][0];
  const std::vector<double>& sig = in.ordering_signature[g];
  SlopeSums sums;
  for (size_t b = in.superlattice_families * bins; b < p; ++b)
    if (gf.count[g][b] > 0 && !std::isnan(m0[b])) sums.add(m0[b], x[b]);
  const double slope = sums.slope();
  if (!(slope > 0)) return std::nan("");
  double num = 0, den = 0;
  for (size_t f = 0; f < in.superlattice_families; ++f) {
    auto used = [&](size_t b) { return sig[b] != 0 && gf.count[g][b] > 0 && !std::isnan(m0[b]); };
    double mr = 0, ms = 0, c = 0;
    for (size_t b = f * bins; b < (f + 1) * bins; ++b)
      if (used(b)) mr += x[b] - slope * m0[b], ms += sig[b], c += 1;
    if (c < 2) continue;
    for (size_t b = f * bins; b < (f + 1) * bins; ++b)
      if (used(b)) num += (sig[b] - ms / c) * (x[b] - slope * m0[b] - mr / c), den += std::pow(sig[b] - ms / c, 2);
  }
  return den > 0 ? num / (slope * den) : std::nan("");
}

/// One phase: which one from the grains' levels with the data's scale (scaled_model_level, median
/// over the grains; the model's first guess where the level cannot be formed). Every point is that
/// phase.
void report_one_phase(const LearnedInputs& in, const GrainFeatures& gf, LearnedFraction& out) {
  std::vector<double> levels;
  if (transfer_possible(in) && in.superlattice_families > 0)
    for (int g = 1; g <= in.grains; ++g)
      if (const double r = scaled_model_level(in, gf, g); !std::isnan(r)) levels.push_back(r);
  if (!levels.empty()) {
    out.single_phase_ordered = median_of(levels) > 0.5;
  } else {
    double sum = 0, count = 0;
    for (size_t k = 0; k < in.points; ++k)
      if (measured(in, k) && !std::isnan(in.first_guess[k])) sum += in.first_guess[k], count += 1;
    out.single_phase_ordered = count > 0 && sum / count > 0.5;
  }
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
  // 1. First split from the model's guess; then learn, score, place and split again, keeping the
  // round with the strongest evidence for two components (a round can drift when edge or grain-boundary points
  // pull the direction toward their own signature).
  const std::vector<double> guess =
      spec.spatial_start ? guess_along_spatial_direction(in, gf, spatial_direction_scores(in, gf)) : in.first_guess;
  const SpatialEvidence structure = scan_structure(in, gf);
  out.spatial_z = structure.pooled;
  const FirstSplit split = first_split(in, gf, guess, structure, spec);
  record_grain_kinds(in, split, out);
  std::vector<uint8_t> label = split.label;
  std::vector<double> score(n, std::nan("")), f(n, std::nan("")), best_f, best_score;
  std::vector<uint8_t> best_label;
  std::vector<double> difference;
  Placement pl, best;
  out.evidence = -HUGE_VAL;
  for (int it = 0; it < spec.iterations; ++it) {
    if (!cross_fitted_scores(in, label, gf, spec, score, difference)) break;
    pl = place_scores(in, label, split.ordered_grain, split.two_phase, score, f);
    const bool both = pl.mix[0].weight >= spec.min_second_weight && pl.mix[1].weight >= spec.min_second_weight;
    if (it == 0 || (both && pl.evidence > out.evidence))
      out.evidence = pl.evidence, best = pl, best_f = f, best_score = score, best_label = label,
      out.difference = difference, out.iterations_run = it + 1;
    for (size_t k = 0; k < n; ++k) label[k] = measured(in, k) && !std::isnan(f[k]) && f[k] >= 0.5;
  }
  // Where only the map's structure shows the second phase, the scores' own mixture has no second
  // mode to place it by (no evidence, or a component of a few strays): the end members come from
  // the patches.
  if (!best_score.empty() && out.spatial_z >= spec.min_spatial_z &&
      (out.evidence < spec.min_evidence || !holds_both_components(in, best_score, best, spec)))
    out.placed_by_patches = place_by_patches(in, best_label, split.ordered_grain, best_score, best, best_f);
  // 4. Two phases only if the second component is there.
  const std::array<EndMember, 2>& mix = best.mix;
  out.scale = best.beta;
  out.separation = component_separation(mix);
  out.two_phases = (out.evidence >= spec.min_evidence || out.spatial_z >= spec.min_spatial_z) &&
                   mix[1].weight >= spec.min_second_weight && mix[0].weight >= spec.min_second_weight;
  if (!out.two_phases) {
    report_one_phase(in, gf, out);
    return out;
  }
  for (size_t k = 0; k < n; ++k)
    if (!std::isnan(best_f[k]))
      out.f[k] = static_cast<float>(best_f[k]), out.uncertainty[k] = static_cast<float>(mix[0].sd / best.beta);
  return out;
}

}  // namespace orderband
