// Ordered-phase fraction per point.
#include "orderband/ordered_fraction.hpp"

#include <algorithm>
#include <cmath>
#include <map>
#include <numeric>

#include <Eigen/Dense>

#include "fraction_summaries.hpp"
#include "orderband/error.hpp"
#include "orderband/grains.hpp"
#include "orderband/laue_group.hpp"
#include "orderband/learned_fraction.hpp"
#include "orderband/pair_catalog.hpp"
#include "orderband/pattern_centre_fit.hpp"
#include "orderband/synth.hpp"
#include "orderband/units.hpp"
#include "row_loop.hpp"

namespace orderband {

size_t FractionResults::measured() const {
  return static_cast<size_t>(std::count(reason.begin(), reason.end(), static_cast<uint8_t>(FractionReason::ok)));
}

double FractionResults::mean_raw() const {
  double s = 0;
  size_t n = 0;
  for (size_t k = 0; k < raw.size(); ++k)
    if (reason[k] == static_cast<uint8_t>(FractionReason::ok)) s += raw[k], ++n;
  return n ? s / n : std::nan("");
}

std::array<EndMember, 2> two_component_mixture(const std::vector<double>& v) {
  // Two Gaussians (the end members) plus a uniform component over the range of the values for the
  // points that mix both phases under the beam (particle edges), fitted by EM.
  std::array<EndMember, 2> c;
  if (v.size() < 4) return c;
  std::vector<double> sorted = v;
  std::sort(sorted.begin(), sorted.end());
  const double lo = sorted[sorted.size() / 200], hi = sorted[sorted.size() - 1 - sorted.size() / 200];
  const double range = std::max(hi - lo, 1e-6);
  // Start from the model's end members, 0 and 1 (the values are in those units).
  c[0] = {0.0, 0.2, 0.45};
  c[1] = {1.0, 0.2, 0.45};
  double uniform = 0.1;
  std::vector<double> r0(v.size()), r1(v.size());
  for (int it = 0; it < 300; ++it) {
    for (size_t k = 0; k < v.size(); ++k) {
      double p[2];
      for (int j = 0; j < 2; ++j)
        p[j] =
            c[j].weight / (c[j].sd * std::sqrt(2 * M_PI)) * std::exp(-0.5 * std::pow((v[k] - c[j].mean) / c[j].sd, 2));
      const double pu = (v[k] >= lo && v[k] <= hi) ? uniform / range : 0.0;
      const double total = std::max(p[0] + p[1] + pu, 1e-300);
      r0[k] = p[0] / total, r1[k] = p[1] / total;
    }
    std::array<EndMember, 2> next;
    double used = 0;
    for (int j = 0; j < 2; ++j) {
      const std::vector<double>& r = j ? r1 : r0;
      double w = 0, m = 0;
      for (size_t k = 0; k < v.size(); ++k) w += r[k], m += r[k] * v[k];
      if (w < 1e-9) return c;
      m /= w;
      double ss = 0;
      for (size_t k = 0; k < v.size(); ++k) ss += r[k] * (v[k] - m) * (v[k] - m);
      next[j] = {m, std::max(std::sqrt(ss / w), 1e-4 * range), w / v.size()};
      used += next[j].weight;
    }
    const bool done = std::abs(next[0].mean - c[0].mean) + std::abs(next[1].mean - c[1].mean) < 1e-9;
    c = next;
    uniform = std::max(1e-6, 1 - used);
    if (done) break;
  }
  if (c[0].mean > c[1].mean) std::swap(c[0], c[1]);
  return c;
}

namespace {

struct Reference {
  std::vector<double> r0, r1, a;  // per family: model window signals of both phases, window weights
  double denominator = 0;         // Σ a (r1 − r0) over families
  std::vector<FamilyProfile> profile0, profile1;
  // Per (superlattice family, bin): model means of both phases over the fundamental contrast,
  // and the matched weight W = Δ · n (Δ = m1 − m0, n pixels in the bin: variance ∝ 1/n).
  std::vector<std::vector<double>> m0, m1, w;
  std::vector<std::vector<double>> slope;  // |dm0/du| per bin: sensitivity to an orientation error
  double bin_denominator = 0;              // Σ W Δ
  double c0 = 0, c1 = 0;                   // fundamental band contrast of the pure phases (window estimator)
  double q1 = 1;                           // ordered phase's fundamental profiles regressed on the disordered phase's
};

struct WindowSignals {
  std::vector<double> s, var;  // per family: interior − flanks, its variance
  std::vector<int> n_int, n_flank;
};

WindowSignals window_signals(const BandProfiler& profiler, const std::vector<FamilyProfile>& prof,
                             const WindowSpec& w) {
  WindowSignals out;
  for (const FamilyProfile& p : prof) {
    const FamilyWindows fw = profiler.windows(p, w);
    const bool ok = fw.interior.count > 0 && fw.flanks.count > 0;
    out.s.push_back(ok ? fw.interior.mean - fw.flanks.mean : 0.0);
    out.var.push_back(ok ? fw.interior.variance_of_mean + fw.flanks.variance_of_mean : 0.0);
    out.n_int.push_back(fw.interior.count);
    out.n_flank.push_back(fw.flanks.count);
  }
  return out;
}

double contrast(const WindowSignals& w, const std::vector<double>& fundamental_weight, size_t first_fundamental) {
  double c = 0;
  for (size_t k = first_fundamental; k < w.s.size(); ++k) c += fundamental_weight[k - first_fundamental] * w.s[k];
  return c;
}

/// The detector background B as a smooth cubic polynomial in the pixel position, fitted by linear
/// least squares so that the smoothed product B·Ī_model reproduces the data's static background
/// (the smoothed scan mean) inside the mask.
std::vector<float> fit_detector_background(const std::vector<float>& data_static, const std::vector<float>& model_mean,
                                           const std::vector<uint8_t>& mask, int w, int h, double sigma) {
  const int terms = 10;
  auto basis = [&](int t, int i, int j) {
    const double x = (j + 0.5) / w - 0.5, y = (i + 0.5) / h - 0.5;
    const int px[10] = {0, 1, 0, 2, 1, 0, 3, 2, 1, 0}, py[10] = {0, 0, 1, 0, 1, 2, 0, 1, 2, 3};
    return std::pow(x, px[t]) * std::pow(y, py[t]);
  };
  const size_t n = static_cast<size_t>(w) * h;
  std::vector<std::vector<float>> columns(terms, std::vector<float>(n));
  for (int t = 0; t < terms; ++t) {
    for (int i = 0; i < h; ++i)
      for (int j = 0; j < w; ++j)
        columns[t][static_cast<size_t>(i) * w + j] =
            static_cast<float>(basis(t, i, j) * model_mean[static_cast<size_t>(i) * w + j]);
    if (sigma > 0) GaussianBlur(w, h, sigma).apply(columns[t].data(), columns[t].data());
  }
  Eigen::MatrixXd ata = Eigen::MatrixXd::Zero(terms, terms);
  Eigen::VectorXd atb = Eigen::VectorXd::Zero(terms);
  for (size_t q = 0; q < n; ++q) {
    if (!mask[q]) continue;
    for (int a = 0; a < terms; ++a) {
      atb[a] += columns[a][q] * data_static[q];
      for (int b = 0; b < terms; ++b) ata(a, b) += columns[a][q] * columns[b][q];
    }
  }
  const Eigen::VectorXd coef = ata.ldlt().solve(atb);
  std::vector<float> background(n);
  for (int i = 0; i < h; ++i)
    for (int j = 0; j < w; ++j) {
      double v = 0;
      for (int t = 0; t < terms; ++t) v += coef[t] * basis(t, i, j);
      background[static_cast<size_t>(i) * w + j] = static_cast<float>(std::max(v, 1e-6));
    }
  return background;
}

/// Nelder–Mead minimisation over a 3-vector from the origin (initial simplex size `step`),
/// until the simplex is smaller than `tolerance` or after `max_evaluations`.
template <class F>
Eigen::Vector3d nelder_mead_3(F&& f, double step, double tolerance, int max_evaluations) {
  std::array<Eigen::Vector3d, 4> x{Eigen::Vector3d::Zero(), Eigen::Vector3d(step, 0, 0), Eigen::Vector3d(0, step, 0),
                                   Eigen::Vector3d(0, 0, step)};
  std::array<double, 4> y;
  for (int i = 0; i < 4; ++i) y[i] = f(x[i]);
  int evaluations = 4;
  while (evaluations < max_evaluations) {
    std::array<int, 4> order{0, 1, 2, 3};
    std::sort(order.begin(), order.end(), [&](int a, int b) { return y[a] < y[b]; });
    const int best = order[0], worst = order[3], second = order[2];
    double size = 0;
    for (int i = 1; i < 4; ++i) size = std::max(size, (x[order[i]] - x[best]).norm());
    if (size < tolerance) break;
    const Eigen::Vector3d centroid = (x[order[0]] + x[order[1]] + x[order[2]]) / 3;
    const Eigen::Vector3d reflected = centroid + (centroid - x[worst]);
    const double yr = f(reflected);
    ++evaluations;
    if (yr < y[best]) {
      const Eigen::Vector3d expanded = centroid + 2 * (centroid - x[worst]);
      const double ye = f(expanded);
      ++evaluations;
      if (ye < yr)
        x[worst] = expanded, y[worst] = ye;
      else
        x[worst] = reflected, y[worst] = yr;
    } else if (yr < y[second]) {
      x[worst] = reflected, y[worst] = yr;
    } else {
      const Eigen::Vector3d contracted = centroid + 0.5 * (x[worst] - centroid);
      const double yc = f(contracted);
      ++evaluations;
      if (yc < y[worst]) {
        x[worst] = contracted, y[worst] = yc;
      } else {
        for (int i = 1; i < 4; ++i) {
          x[order[i]] = x[best] + 0.5 * (x[order[i]] - x[best]);
          y[order[i]] = f(x[order[i]]);
          ++evaluations;
        }
      }
    }
  }
  int best = 0;
  for (int i = 1; i < 4; ++i)
    if (y[i] < y[best]) best = i;
  return x[best];
}

/// The model's first guess of a point's fraction for the learned estimator: the point's
/// superlattice profile shapes (each family's mean over its bins removed, so that offsets and
/// fundamental contrast do not enter) projected on the model's ordered − disordered difference.
/// `model[phase]` and `x` hold families × bins features (NaN: bin not covered).
double model_first_guess(const std::array<std::vector<double>, 2>& model, const float* x, size_t bins,
                         size_t superlattice_families) {
  double num = 0, den = 0;
  auto covered = [&](size_t i) { return !std::isnan(x[i]) && !std::isnan(model[0][i]); };
  for (size_t f = 0; f < superlattice_families; ++f) {
    double mx = 0, m0 = 0, m1 = 0, c = 0;
    for (size_t i = f * bins; i < (f + 1) * bins; ++i)
      if (covered(i)) mx += x[i], m0 += model[0][i], m1 += model[1][i], c += 1;
    if (c < 2) continue;
    mx /= c, m0 /= c, m1 /= c;
    for (size_t i = f * bins; i < (f + 1) * bins; ++i) {
      if (!covered(i)) continue;
      const double d = (model[1][i] - m1) - (model[0][i] - m0);
      num += d * ((x[i] - mx) - (model[0][i] - m0)), den += d * d;
    }
  }
  return den > 0 ? num / den : std::nan("");
}

/// Writes the bin means of every family (families × bins values) where a bin holds pixels; other
/// entries are left as they are (NaN: not covered).
template <class T>
void profile_features(const std::vector<FamilyProfile>& prof, size_t bins, T* out) {
  for (size_t f = 0; f < prof.size(); ++f)
    for (size_t b = 0; b < bins; ++b)
      if (prof[f].weight[b] > 0) out[f * bins + b] = static_cast<T>(prof[f].mean(b));
}

/// Whether a chosen fundamental family lies on the planes of family `f` (hkl a multiple of f's):
/// in L1₂ every superlattice family does ({100} inside {200}), but only the strong low-index ones
/// are chosen, and a change of their intensity with ordering would swamp a faint interior excess.
bool covered_by_fundamental(const PairFamily& f, const std::vector<PairFamily>& chosen, size_t first_fundamental) {
  for (size_t j = first_fundamental; j < chosen.size(); ++j)
    for (int m = 2; m <= 4; ++m)
      if (chosen[j].family.hkl == m * f.family.hkl) return true;
  return false;
}

/// The learned estimator's ordering signature of one grain (LearnedInputs::ordering_signature):
/// the model's ordered − disordered profile difference at the grain's orientation on the
/// superlattice families no chosen fundamental family covers (all of them if every one is
/// covered), bins with |u| < 1.75 only, each family's mean over them removed; 0 elsewhere. Where
/// a covering fundamental band changes with ordering (in strength or edge lines), its change would
/// outweigh the faint superlattice band; the uncovered families see only the new band and the
/// crossings of other bands, which the model's difference does not contain.
std::vector<double> ordering_signature(const BandProfiler& features, const std::vector<PairFamily>& chosen,
                                       size_t first_fundamental, const std::array<std::vector<double>, 2>& model) {
  const size_t bins = static_cast<size_t>(features.bins());
  std::vector<uint8_t> use(first_fundamental, 0);
  for (size_t f = 0; f < first_fundamental; ++f) use[f] = !covered_by_fundamental(chosen[f], chosen, first_fundamental);
  if (std::find(use.begin(), use.end(), 1) == use.end()) std::fill(use.begin(), use.end(), 1);
  std::vector<double> signature(chosen.size() * bins, 0.0);
  for (size_t f = 0; f < first_fundamental; ++f) {
    if (!use[f]) continue;
    double mean = 0, count = 0;
    auto inside = [&](size_t b) {
      const size_t i = f * bins + b;
      const double u = std::abs(features.bin_centre_u(static_cast<int>(b)));
      return (u < 0.75 || (u > 1.25 && u < 1.75)) && !std::isnan(model[0][i]) && !std::isnan(model[1][i]);
    };
    for (size_t b = 0; b < bins; ++b)
      if (inside(b)) mean += model[1][f * bins + b] - model[0][f * bins + b], count += 1;
    if (count < 2) continue;
    mean /= count;
    for (size_t b = 0; b < bins; ++b)
      if (inside(b)) signature[f * bins + b] = model[1][f * bins + b] - model[0][f * bins + b] - mean;
  }
  return signature;
}

/// At a grain boundary the beam sees a second lattice. The other grain's model pattern profiled in
/// this grain's frame (`seen`, families × bins), less this grain's own model profile (`own_model`),
/// is the direction along which a point's features move with the other lattice's share; its
/// component in the point's features `x` (least squares about the grain's mean features, bins no
/// point of the grain covers left out) is taken out. The model gives the other lattice's band
/// positions; the share comes from the data.
void take_out_second_lattice(float* x, const std::vector<double>& grain_mean, const std::vector<double>& grain_count,
                             const std::vector<double>& own_model, const std::vector<std::vector<double>>& seen,
                             size_t bins) {
  auto direction = [&](size_t i) { return seen[i / bins][i % bins] - own_model[i]; };
  auto usable = [&](size_t i) { return !std::isnan(x[i]) && !std::isnan(own_model[i]) && grain_count[i] > 0; };
  double rc = 0, cc = 0;
  for (size_t i = 0; i < own_model.size(); ++i)
    if (usable(i)) rc += (x[i] - grain_mean[i]) * direction(i), cc += direction(i) * direction(i);
  if (!(cc > 0)) return;
  const double share = rc / cc;
  for (size_t i = 0; i < own_model.size(); ++i)
    if (usable(i)) x[i] -= static_cast<float>(share * direction(i));
}

/// End members as the learned estimator found them: mean, spread and share of the measured points
/// on either side of one half.
void end_members_either_side_of_half(FractionResults& r) {
  double sum[2] = {0, 0}, sq[2] = {0, 0}, cnt[2] = {0, 0};
  for (size_t k = 0; k < r.raw.size(); ++k) {
    if (r.reason[k] != static_cast<uint8_t>(FractionReason::ok)) continue;
    const int c = r.raw[k] >= 0.5;
    sum[c] += r.raw[k], sq[c] += double(r.raw[k]) * r.raw[k], cnt[c] += 1;
  }
  const double total = cnt[0] + cnt[1];
  for (int c = 0; c < 2; ++c) {
    EndMember& e = c ? r.ordered : r.disordered;
    if (cnt[c] > 0)
      e.mean = sum[c] / cnt[c], e.sd = std::sqrt(std::max(0.0, sq[c] / cnt[c] - e.mean * e.mean)),
      e.weight = cnt[c] / total;
  }
}

}  // namespace

FractionResults ordered_fraction_scan(const ScanConfig& config, const OrientationResults& ori, const FractionSpec& spec,
                                      const ProgressFn& progress, RowStore* store) {
  const ScanGrid& grid = config.grid;
  const size_t n = grid.count();
  if (ori.orientation.size() != n) fail("fraction: orientations for ", ori.orientation.size(), " points, scan has ", n);
  const OrderingPair pair = load_phases(config.phases);
  const std::vector<PairFamily> table = pair_family_table(pair, config.kv, spec.d_min_A);

  // Families: every superlattice-sensitive one, then the strongest fundamental ones.
  std::vector<PairFamily> chosen;
  for (const PairFamily& f : table)
    if (f.sensitivity >= spec.sensitivity_threshold) chosen.push_back(f);
  const size_t first_fundamental = chosen.size();
  if (first_fundamental == 0)
    fail("pair ", pair.name, ": no plane family reaches superlattice sensitivity ", spec.sensitivity_threshold,
         " with d >= ", spec.d_min_A, " A; the two phases give the same bands");
  std::vector<PairFamily> fundamentals;
  for (const PairFamily& f : table)
    if (f.sensitivity < spec.sensitivity_threshold) fundamentals.push_back(f);
  std::sort(fundamentals.begin(), fundamentals.end(), [](const PairFamily& a, const PairFamily& b) {
    return a.rel_intensity_disordered > b.rel_intensity_disordered;
  });
  if (fundamentals.size() > static_cast<size_t>(spec.fundamental_families))
    fundamentals.resize(spec.fundamental_families);
  if (fundamentals.empty()) fail("pair ", pair.name, ": no fundamental family to normalise the band contrast");
  std::vector<double> fundamental_weight;
  for (const PairFamily& f : fundamentals) fundamental_weight.push_back(f.rel_intensity_disordered);
  chosen.insert(chosen.end(), fundamentals.begin(), fundamentals.end());
  std::vector<ProfileFamily> pf;
  for (const PairFamily& f : chosen) {
    ProfileFamily p;
    p.label = f.family.label();
    p.theta_b = f.sensitivity >= spec.sensitivity_threshold ? f.bragg_ordered_rad : f.bragg_disordered_rad;
    for (const CrystalDirection& d : f.family.normals) p.normals.push_back(d.vec());
    pf.push_back(p);
  }
  const BandProfiler profiler(pf, spec.profile);
  const size_t nf = chosen.size();

  auto source = open_pattern_source(config.patterns, grid);
  DetectorGeometry geometry(geometry_for(config, source->width(), source->height()));
  DetectorRays rays(geometry);
  const Preprocessor pre = make_preprocessor(config.preprocess, *source);

  // Model references per grain, at the grain's mean orientation.
  const BandModelParams band_params;
  const KinematicBandModel model_ordered(pair.ordered, config.kv, band_params),
      model_disordered(pair.disordered, config.kv, with_families_of(band_params, pair.disordered, pair.ordered));
  const PatternRenderer renderer(geometry, model_ordered, model_disordered, 1000.0, 0.0);
  // The model patterns meet the data's processing: they carry an estimate of the detector
  // background B and are divided by the data's own static background S_data. The data are
  // c·B·I / S_data, the model B̂·I_model / S_data, so where B̂ ≈ B both go through the same
  // division, including the faint band structure that survives the smoothing of the scan mean
  // (superlattice bands of the ordered share among them: a model-made static background would
  // lack those and shift every point's estimate). With the scan mean as static background,
  // S_data = smooth(B·Ī) with Ī the scan's mean band pattern, approximated by the grains' model
  // patterns weighted by their share of the scan, and B̂ is fitted to that.
  std::vector<float> model_mean(source->pixels(), 0.0f);
  const std::vector<float> data_static = pre.static_background();
  std::vector<float> detector_background(source->pixels(), 1.0f);
  PreprocessSpec model_spec = config.preprocess;
  model_spec.hot_pixel_filter = false;
  if (!data_static.empty()) {
    if (config.preprocess.static_background == StaticBackgroundKind::scan_mean) {
      const int grains_n = ori.grains.count();
      std::vector<std::vector<float>> grain_model(grains_n + 1);
      double total = 0;
      for (int g = 1; g <= grains_n; ++g) total += ori.grains.size[g - 1];
#pragma omp parallel for schedule(dynamic)
      for (int g = 1; g <= grains_n; ++g) {
        grain_model[g].resize(source->pixels());
        renderer.expected({{ori.grains.mean[g - 1], false, 1.0, 0}}, geometry, grain_model[g].data());
      }
      for (int g = 1; g <= grains_n; ++g)
        for (size_t q = 0; q < model_mean.size(); ++q)
          model_mean[q] += static_cast<float>(grain_model[g][q] * ori.grains.size[g - 1] / std::max(total, 1.0));
      const double sigma = config.preprocess.static_background_sigma_px < 0
                               ? 0.1 * source->width()
                               : config.preprocess.static_background_sigma_px;
      detector_background =
          fit_detector_background(data_static, model_mean, pre.mask(), source->width(), source->height(), sigma);
    } else {
      detector_background = data_static;  // a user's flat field is the detector background itself
    }
    model_spec.static_background = StaticBackgroundKind::file;  // given directly below
  } else {
    model_spec.static_background = StaticBackgroundKind::none;
  }
  const Preprocessor model_pre(model_spec, source->width(), source->height(), data_static);
  const int grains = ori.grains.count();
  const CrystalSymmetry symmetry(laue_rotations(pair.disordered));
  const std::vector<std::optional<Rotation>> point_orientation =
      kernel_mean_orientations(grid, ori.orientation, ori.grains, symmetry, spec.orientation_kernel_radius);

  // Grain orientations refined against the model processed exactly like the data: the mean
  // preprocessed pattern of each grain is matched (Nelder–Mead on a rotation vector, correlation
  // with the processed model pattern). Every point of the grain then takes the same correction,
  // which keeps its own deviation from the grain mean (intragranular gradients) but removes a
  // bias that fitting the unprocessed model leaves in the orientation stage.
  // A pure phase's model pattern as the data would show it: detector background, then the
  // data's processing.
  auto processed_phase_with = [&](const Preprocessor& processing, const DetectorGeometry& geo, const Rotation& g,
                                  bool ordered, float* out) {
    renderer.expected({{g, ordered, 1.0, 0}}, geo, out);
    for (size_t q = 0; q < source->pixels(); ++q) out[q] *= detector_background[q];
    processing.apply(out);
  };
  auto processed_phase = [&](const DetectorGeometry& geo, const Rotation& g, bool ordered, float* out) {
    processed_phase_with(model_pre, geo, g, ordered, out);
  };
  std::vector<Rotation> grain_orientation(grains + 1), correction(grains + 1);
  for (int g = 1; g <= grains; ++g) grain_orientation[g] = ori.grains.mean[g - 1];
  FractionResults r;
  r.geometry = geometry.spec();
  {
    std::vector<std::vector<double>> sums(grains + 1);
    std::vector<int> counts(grains + 1, 0);
    PreprocessedRows pass(*source, grid, pre);
    std::vector<float> pats;
    std::vector<uint8_t> ok;
    int row0 = 0;
    while (pass.next(pats, ok)) {
      for (int col = 0; col < grid.cols; ++col) {
        const size_t k = grid.index({row0, col});
        const int g = ori.grains.id[k];
        if (!ok[col] || g <= 0 || !ori.orientation[k]) continue;
        if (sums[g].empty()) sums[g].assign(source->pixels(), 0.0);
        const float* p = pats.data() + static_cast<size_t>(col) * source->pixels();
        for (size_t q = 0; q < source->pixels(); ++q) sums[g][q] += p[q];
        counts[g] += 1;
      }
      ++row0;
    }
    // The pattern centre and distance, refined on the largest grains' mean patterns (jointly with
    // their orientations) against the processed model: a calibration error of a few tenths of a
    // pixel distorts the model against the data and shifts f by a few hundredths.
    auto processed_model = [&](const DetectorGeometry& geo, const Rotation& g, float* out) {
      processed_phase(geo, g, false, out);
    };
    if (spec.refine_pattern_centre) {
      std::vector<int> order;
      for (int g = 1; g <= grains; ++g)
        if (counts[g] >= spec.pattern_centre_min_points) order.push_back(g);
      std::sort(order.begin(), order.end(),
                [&](int a, int b) { return counts[a] > counts[b] || (counts[a] == counts[b] && a < b); });
      if (order.size() > static_cast<size_t>(spec.pattern_centre_grains)) order.resize(spec.pattern_centre_grains);
      if (!order.empty()) {
        std::vector<GrainPattern> evidence;
        for (int g : order) {
          GrainPattern e;
          e.mean.resize(source->pixels());
          for (size_t q = 0; q < e.mean.size(); ++q) e.mean[q] = static_cast<float>(sums[g][q] / counts[g]);
          e.orientation = grain_orientation[g];
          evidence.push_back(std::move(e));
        }
        const PatternCentreFit fit = fit_pattern_centre(geometry.spec(), evidence, pre.mask(), processed_model);
        r.pattern_centre_grains = static_cast<int>(order.size());
        r.pattern_centre_correlation_before = fit.correlation_before;
        r.pattern_centre_correlation_after = fit.correlation_after;
        r.pattern_centre_refined = fit.accepted;
        if (fit.accepted) {
          geometry = DetectorGeometry(fit.geometry);
          rays = DetectorRays(geometry);
          r.geometry = fit.geometry;
          for (size_t i = 0; i < order.size(); ++i) grain_orientation[order[i]] = fit.orientation[i];
        }
      }
    }
#pragma omp parallel for schedule(dynamic)
    for (int g = 1; g <= grains; ++g) {
      if (counts[g] < spec.min_points_for_grain_fit) continue;
      std::vector<float> mean(source->pixels()), img(source->pixels());
      for (size_t q = 0; q < mean.size(); ++q) mean[q] = static_cast<float>(sums[g][q] / counts[g]);
      const Rotation start = grain_orientation[g];
      auto cost = [&](const Eigen::Vector3d& v) {
        const Rotation trial = v.norm() > 0 ? Rotation::from_axis_angle(v, v.norm()) * start : start;
        processed_model(geometry, trial, img.data());
        double sxy = 0, sxx = 0, syy = 0;
        for (size_t q = 0; q < img.size(); ++q)
          if (pre.mask()[q]) sxy += img[q] * mean[q], sxx += img[q] * img[q], syy += mean[q] * mean[q];
        return -sxy / std::sqrt(std::max(sxx * syy, 1e-300));
      };
      const Eigen::Vector3d best = nelder_mead_3(cost, deg_to_rad(0.1), deg_to_rad(0.0005), 600);
      if (best.norm() > 0) grain_orientation[g] = Rotation::from_axis_angle(best, best.norm()) * start;
    }
    // Each grain's correction in the sample frame (g_new = g_old · C), the same for every
    // symmetric variant a point's orientation may be written in.
    for (int g = 1; g <= grains; ++g) correction[g] = ori.grains.mean[g - 1].inverse() * grain_orientation[g];
  }
  // The reference of both phases at an orientation, profiled with the same orientation: data and
  // reference must share their binning (bins are much finer than a pixel, so a change of binning
  // by a few thousandths of a degree moves pixels between bins and shifts the bin means).
  auto build_reference = [&](const Rotation& orientation) {
    Reference ref;
    std::vector<float> img(source->pixels());
    WindowSignals w[2];
    for (int phase = 0; phase < 2; ++phase) {
      processed_phase(geometry, orientation, phase == 1, img.data());
      std::vector<FamilyProfile>& prof = phase ? ref.profile1 : ref.profile0;
      profiler.profile(img.data(), pre.mask(), rays, orientation, prof);
      w[phase] = window_signals(profiler, prof, spec.windows);
    }
    const double c0 = contrast(w[0], fundamental_weight, first_fundamental);
    const double c1 = contrast(w[1], fundamental_weight, first_fundamental);
    ref.c0 = c0, ref.c1 = c1;
    ref.r0.assign(nf, 0.0), ref.r1.assign(nf, 0.0), ref.a.assign(nf, 0.0);
    for (size_t f = 0; f < first_fundamental; ++f) {
      if (c0 <= 0 || c1 <= 0 || w[0].n_int[f] == 0 || w[0].n_flank[f] == 0) continue;
      ref.r0[f] = w[0].s[f] / c0;
      ref.r1[f] = w[1].s[f] / c1;
      const double var = 1.0 / w[0].n_int[f] + 1.0 / w[0].n_flank[f];  // pixel noise alike everywhere
      ref.a[f] = (ref.r1[f] - ref.r0[f]) / var;
      ref.denominator += ref.a[f] * (ref.r1[f] - ref.r0[f]);
    }
    ref.m0.assign(first_fundamental, {}), ref.m1.assign(first_fundamental, {}), ref.w.assign(first_fundamental, {});
    ref.slope.assign(first_fundamental, {});
    for (size_t f = 0; f < first_fundamental; ++f) {
      ref.m0[f].assign(profiler.bins(), 0.0), ref.m1[f].assign(profiler.bins(), 0.0),
          ref.w[f].assign(profiler.bins(), 0.0);
      if (c0 <= 0 || c1 <= 0) continue;
      for (int b = 0; b < profiler.bins(); ++b) {
        const int pixels = ref.profile0[f].count[b];
        if (pixels == 0) continue;
        // Profile estimator: model means in the units of the disordered model's fundamental bands.
        ref.m0[f][b] = ref.profile0[f].mean(b);
        ref.m1[f][b] = ref.profile1[f].mean(b);
        const double delta = ref.m1[f][b] - ref.m0[f][b];
        ref.w[f][b] = delta * pixels;
        ref.bin_denominator += ref.w[f][b] * delta;
      }
      ref.slope[f].assign(profiler.bins(), 0.0);
      for (int b = 1; b + 1 < profiler.bins(); ++b)
        if (ref.profile0[f].count[b - 1] && ref.profile0[f].count[b + 1])
          ref.slope[f][b] = std::abs(ref.m0[f][b + 1] - ref.m0[f][b - 1]) / (2 * spec.profile.bin_u);
    }
    {
      double sxy = 0, sxx = 0;
      for (size_t f = first_fundamental; f < nf; ++f)
        for (int b = 0; b < profiler.bins(); ++b) {
          const int pixels = ref.profile0[f].count[b];
          if (!pixels) continue;
          sxy += pixels * ref.profile1[f].mean(b) * ref.profile0[f].mean(b);
          sxx += pixels * ref.profile0[f].mean(b) * ref.profile0[f].mean(b);
        }
      ref.q1 = sxx > 0 ? sxy / sxx : 1.0;
    }
    return ref;
  };
  std::vector<Reference> refs(grains + 1);
#pragma omp parallel for schedule(dynamic)
  for (int g = 1; g <= grains; ++g) refs[g] = build_reference(grain_orientation[g]);

  // Grain boundaries: the pattern of each grain profiled in the frame of each grain it touches
  // (8-neighbours), for the points whose beam sees both lattices.
  auto neighbour_grain = [&](size_t k) {
    std::map<int, int> votes;
    for (const GridPoint& nb : grid.neighbours(grid.point(k), 8)) {
      const int id = ori.grains.id[grid.index(nb)];
      if (id > 0 && id != ori.grains.id[k]) votes[id] += 1;
    }
    int best = 0, best_votes = 0;
    for (const auto& [id, v] : votes)
      if (v > best_votes) best = id, best_votes = v;
    return best;
  };
  // Each grain's disordered model pattern (processed by `processing`) profiled by `by` in the frame
  // of every grain it touches: per (frame grain, seen grain), families × bins means.
  using CrossProfiles = std::map<std::pair<int, int>, std::vector<std::vector<double>>>;
  auto cross_profiles_with = [&](const BandProfiler& by, const Preprocessor& processing) {
    std::vector<std::vector<int>> touching(grains + 1);
    for (size_t k = 0; k < n; ++k) {
      const int g = ori.grains.id[k];
      if (g <= 0) continue;
      for (const GridPoint& nb : grid.neighbours(grid.point(k), 8)) {
        const int other = ori.grains.id[grid.index(nb)];
        if (other > 0 && other != g) touching[other].push_back(g);
      }
    }
    std::vector<std::vector<std::pair<int, std::vector<std::vector<double>>>>> seen(grains + 1);
#pragma omp parallel for schedule(dynamic)
    for (int g2 = 1; g2 <= grains; ++g2) {
      std::sort(touching[g2].begin(), touching[g2].end());
      touching[g2].erase(std::unique(touching[g2].begin(), touching[g2].end()), touching[g2].end());
      if (touching[g2].empty()) continue;
      std::vector<float> img(source->pixels());
      processed_phase_with(processing, geometry, grain_orientation[g2], false, img.data());
      std::vector<FamilyProfile> prof;
      for (int g : touching[g2]) {
        by.profile(img.data(), pre.mask(), rays, grain_orientation[g], prof);
        std::vector<std::vector<double>> means(nf, std::vector<double>(by.bins(), 0.0));
        for (size_t f = 0; f < nf; ++f)
          for (int b = 0; b < by.bins(); ++b) means[f][b] = prof[f].mean(b);
        seen[g2].emplace_back(g, std::move(means));
      }
    }
    CrossProfiles cross;
    for (int g2 = 1; g2 <= grains; ++g2)
      for (auto& [g, means] : seen[g2]) cross[{g, g2}] = std::move(means);
    return cross;
  };
  CrossProfiles cross_profiles;  // the model-led estimator's (the learned one makes its own)
  if (spec.estimator != FractionEstimator::learned) cross_profiles = cross_profiles_with(profiler, model_pre);

  // The profile estimator at one point in one frame. The pattern quality q regresses the point's
  // fundamental profiles on the disordered model's (with a second lattice's pattern `cross` beside
  // it at a grain boundary, fitted jointly and taken out of every bin); then the matched filter over
  // the superlattice bins with weights W = Δ / (noise variance + systematic variance), the latter
  // from the reference's slope times the orientation uncertainty in units of θ_B.
  struct PointFit {
    bool ok = false;
    double q = 0, f = 0, var = 0;
  };
  auto fit_point = [&](const std::vector<FamilyProfile>& prof, const Reference& ref,
                       const std::vector<std::vector<double>>* cross, double pixel_sd, double* fam_num = nullptr,
                       double* fam_den = nullptr) {
    PointFit out;
    // Fundamental bins: y = q m0 (+ c n2), least squares with the pixel counts as weights.
    double smm = 0, smn = 0, snn = 0, sym = 0, syn = 0;
    for (size_t f = first_fundamental; f < nf; ++f)
      for (int b = 0; b < profiler.bins(); ++b) {
        const int pixels = ref.profile0[f].count[b];
        if (!pixels || prof[f].weight[b] <= 0) continue;
        const double y = prof[f].mean(b), m0 = ref.profile0[f].mean(b), n2 = cross ? (*cross)[f][b] : 0.0;
        smm += pixels * m0 * m0, smn += pixels * m0 * n2, snn += pixels * n2 * n2;
        sym += pixels * y * m0, syn += pixels * y * n2;
      }
    double q = 0, c = 0;
    const double det = smm * snn - smn * smn;
    if (cross && det > 1e-9 * smm * snn) {
      q = (sym * snn - syn * smn) / det;
      c = (smm * syn - smn * sym) / det;
    } else if (smm > 0) {
      q = sym / smm;
    }
    out.q = q;
    if (!(q > 0.05)) return out;
    double num = 0, var = 0, D = 0, wy = 0;
    for (size_t f = 0; f < first_fundamental; ++f) {
      const FamilyProfile& p = prof[f];
      const double du = spec.orientation_uncertainty_rad / pf[f].theta_b;
      double f_num = 0, f_var = 0, f_sig = 0;
      for (int b = 0; b < profiler.bins(); ++b) {
        if (ref.w[f][b] == 0 || p.weight[b] <= 0) continue;
        const double x = (p.mean(b) - (cross ? c * (*cross)[f][b] : 0.0)) / q;
        const double n_eff = p.weight[b] * p.weight[b] / std::max(p.weight_sq[b], 1e-300);
        const double vb = pixel_sd * pixel_sd / n_eff / (q * q);
        const double vs = std::pow(ref.slope[f][b] * du, 2);
        const double delta = ref.m1[f][b] - ref.m0[f][b];
        const double wb = delta / (vb + vs);
        f_num += wb * (x - ref.m0[f][b]);
        f_var += wb * wb * vb;
        f_sig += wb * delta;
        wy += wb * x;
      }
      num += f_num, var += f_var, D += f_sig;
      if (fam_num && f_var > 0) fam_num[f] += f_sig / std::sqrt(f_var), fam_den[f] += 1;
    }
    if (!(D > 0)) return out;
    // A mixture's fundamental bands are (1 − f + f q1) times the disordered model's, so
    // y (1 − f + f q1) = (1 − f) m0 + f m1 in every bin; summed with the weights:
    // f = Σ W (y − m0) / Σ W [(m1 − m0) − (q1 − 1) y]  (= Σ W (y − m0) / Σ W Δ for q1 = 1).
    const double denom = D - (ref.q1 - 1) * wy;
    out.ok = true;
    out.f = num / denom;
    out.var = var / (denom * denom);
    return out;
  };

  struct {
    std::vector<std::vector<double>> difference;  // per family and bin
    std::vector<double> u;                        // bin centres, θ_B units
  } learned_families;
  // The data-led estimator (learned_fraction.hpp): features are the crystal-frame profiles of
  // every chosen family binned with the grain's orientation; the model gives only geometry and the
  // first split of the points.
  // Both phases' model features at each grain's orientation, processed like the data (the
  // learned estimator's first guess).
  auto learned_model_features = [&](const BandProfiler& features, const Preprocessor& processing) {
    const size_t p = nf * static_cast<size_t>(features.bins());
    std::vector<std::array<std::vector<double>, 2>> model(grains + 1);
#pragma omp parallel for schedule(dynamic)
    for (int g = 1; g <= grains; ++g) {
      std::vector<float> img(source->pixels());
      std::vector<FamilyProfile> prof;
      for (int phase = 0; phase < 2; ++phase) {
        processed_phase_with(processing, geometry, grain_orientation[g], phase == 1, img.data());
        features.profile(img.data(), pre.mask(), rays, grain_orientation[g], prof);
        model[g][phase].assign(p, std::nan(""));
        profile_features(prof, static_cast<size_t>(features.bins()), model[g][phase].data());
      }
    }
    return model;
  };
  // Every point's features (resumable, row by row) and its pattern quality.
  auto collect_learned_features = [&](FractionResults& res, const BandProfiler& features,
                                      const Preprocessor& processing, LearnedInputs& in) {
    const size_t p = in.features, bins = static_cast<size_t>(features.bins());
    PreprocessedRows rows(*source, grid, processing);
    for_each_scan_row(
        rows, grid, store, "fraction-learned", progress,
        [&](int row, ByteReader& bytes) {
          for (int col = 0; col < grid.cols; ++col) {
            const size_t k = grid.index({row, col});
            res.reason[k] = bytes.get<uint8_t>();
            res.band_contrast[k] = bytes.get<float>();
            for (size_t b = 0; b < p; ++b) in.x[k * p + b] = bytes.get<float>();
          }
        },
        [&](int row, const std::vector<float>& patterns, const std::vector<uint8_t>& usable) {
#pragma omp parallel
          {
            std::vector<FamilyProfile> prof;
#pragma omp for schedule(dynamic)
            for (int col = 0; col < grid.cols; ++col) {
              const size_t k = grid.index({row, col});
              const int g = ori.grains.id[k];
              if (!usable[col]) {
                res.reason[k] = static_cast<uint8_t>(FractionReason::unusable_pattern);
                continue;
              }
              if (!ori.orientation[k] || g <= 0) {
                res.reason[k] = static_cast<uint8_t>(FractionReason::no_orientation);
                continue;
              }
              const float* pattern = patterns.data() + static_cast<size_t>(col) * source->pixels();
              features.profile(pattern, pre.mask(), rays, grain_orientation[g], prof);
              profile_features(prof, bins, in.x.data() + k * p);
              // Pattern quality: the strongest fundamental band's interior over its flanks.
              const FamilyWindows fw = features.windows(prof[first_fundamental], spec.windows);
              res.band_contrast[k] = static_cast<float>(fw.interior.mean - fw.flanks.mean);
            }
          }
        },
        [&](int row, ByteWriter& bytes) {
          for (int col = 0; col < grid.cols; ++col) {
            const size_t k = grid.index({row, col});
            bytes.put<uint8_t>(res.reason[k]);
            bytes.put<float>(res.band_contrast[k]);
            for (size_t b = 0; b < p; ++b) bytes.put<float>(in.x[k * p + b]);
          }
        });
  };
  // The data-led estimator (learned_fraction.hpp): features are the crystal-frame profiles of
  // every chosen family binned with the grain's orientation, from patterns kept linear in the phase
  // mixture; the model gives only geometry and the first split of the points.
  auto learned_estimate = [&](FractionResults& res) {
    const BandProfiler features(pf, spec.learned_profile);
    const size_t bins = static_cast<size_t>(features.bins()), p = nf * bins;
    PreprocessSpec linear_spec = config.preprocess, linear_model_spec = model_spec;
    linear_spec.unit_variance = linear_model_spec.unit_variance = false;
    const Preprocessor pre_linear(linear_spec, source->width(), source->height(), data_static);
    const Preprocessor model_linear(linear_model_spec, source->width(), source->height(), data_static);
    const auto model_features = learned_model_features(features, model_linear);

    LearnedInputs in;
    in.points = n, in.features = p, in.grains = grains, in.cols = grid.cols;
    in.grain.assign(n, 0);
    in.fold.assign(n, 0);
    in.x.assign(n * p, std::nanf(""));
    in.first_guess.assign(n, std::nan(""));
    for (size_t k = 0; k < n; ++k) {
      const GridPoint pt = grid.point(k);
      in.fold[k] = static_cast<uint8_t>((pt.row / 4 + pt.col / 4) % 2);  // alternate 4 × 4 blocks
    }
    collect_learned_features(res, features, pre_linear, in);
    in.boundary.assign(n, 0);
    for (size_t k = 0; k < n; ++k)
      for (const GridPoint& nb : grid.neighbours(grid.point(k), 8))
        in.boundary[k] = in.boundary[k] || ori.grains.id[grid.index(nb)] != ori.grains.id[k];
    for (size_t k = 0; k < n; ++k)
      if (res.reason[k] == static_cast<uint8_t>(FractionReason::ok)) in.grain[k] = ori.grains.id[k];
    // A grain with too few points away from its boundaries (a sliver at the field's edge) cannot be
    // placed: its mean is too noisy and too mixed with its neighbours' lattices.
    std::vector<int> inner_points(grains + 1, 0);
    for (size_t k = 0; k < n; ++k)
      if (in.grain[k] > 0 && !in.boundary[k]) ++inner_points[in.grain[k]];
    for (size_t k = 0; k < n; ++k)
      if (in.grain[k] > 0 && inner_points[in.grain[k]] < spec.learned.min_grain_points)
        in.grain[k] = 0, res.reason[k] = static_cast<uint8_t>(FractionReason::small_grain);
    // Grain boundaries: the second lattice's share taken out of the features, about each grain's
    // mean over its points away from boundaries.
    const CrossProfiles cross = cross_profiles_with(features, model_linear);
    const GrainFeatures interior = grain_features(in);
    for (size_t k = 0; k < n; ++k) {
      const int g = in.grain[k];
      if (g <= 0 || !in.boundary[k]) continue;
      const int other = neighbour_grain(k);
      if (const auto seen = cross.find({g, other}); other > 0 && seen != cross.end())
        take_out_second_lattice(in.x.data() + k * p, interior.mean[g], interior.count[g], model_features[g][0],
                                seen->second, bins);
    }
    in.model = model_features;
    in.bins = bins;
    in.superlattice_families = first_fundamental;
    in.ordering_signature.assign(grains + 1, {});
    for (int g = 1; g <= grains; ++g)
      in.ordering_signature[g] = ordering_signature(features, chosen, first_fundamental, model_features[g]);
    for (size_t k = 0; k < n; ++k)
      if (in.grain[k] > 0)
        in.first_guess[k] =
            model_first_guess(model_features[in.grain[k]], in.x.data() + k * p, bins, first_fundamental);
    const LearnedFraction lf = learn_fraction(in, spec.learned);
    for (size_t k = 0; k < n; ++k) {
      if (res.reason[k] != static_cast<uint8_t>(FractionReason::ok)) continue;
      if (std::isnan(lf.f[k])) {
        res.reason[k] = static_cast<uint8_t>(FractionReason::no_band_contrast);
        continue;
      }
      res.raw[k] = lf.f[k];
      res.uncertainty[k] = lf.uncertainty[k];
    }
    res.estimator = "learned";
    res.two_phases = lf.two_phases;
    res.single_phase_ordered = lf.single_phase_ordered;
    res.learned_separation = lf.separation;
    res.learned_evidence = lf.evidence;
    res.learned_iterations = lf.iterations_run;
    end_members_either_side_of_half(res);
    if (lf.difference.size() == nf * bins)
      for (size_t f = 0; f < nf; ++f)
        learned_families.difference.emplace_back(lf.difference.begin() + f * bins,
                                                 lf.difference.begin() + (f + 1) * bins);
    for (size_t b = 0; b < bins; ++b) learned_families.u.push_back(features.bin_centre_u(static_cast<int>(b)));
  };

  r.fraction.assign(n, std::nanf(""));
  r.raw.assign(n, std::nanf(""));
  r.uncertainty.assign(n, std::nanf(""));
  r.band_contrast.assign(n, std::nanf(""));
  r.reason.assign(n, static_cast<uint8_t>(FractionReason::ok));
  std::vector<double> sep_num(nf, 0.0), sep_den(nf, 0.0);

  const size_t px = source->pixels();
  const bool learned = spec.estimator == FractionEstimator::learned;
  std::vector<double> row_num(nf, 0.0), row_den(nf, 0.0);  // this row's family separations
  if (learned) {
    learned_estimate(r);
  } else {
    PreprocessedRows rows(*source, grid, pre);
    for_each_scan_row(
        rows, grid, store, "fraction", progress,
        [&](int row, ByteReader& in) {
          for (int col = 0; col < grid.cols; ++col) {
            const size_t k = grid.index({row, col});
            r.reason[k] = in.get<uint8_t>();
            r.raw[k] = in.get<float>();
            r.uncertainty[k] = in.get<float>();
            r.band_contrast[k] = in.get<float>();
          }
          for (size_t f = 0; f < nf; ++f) sep_num[f] += in.get<double>(), sep_den[f] += in.get<double>();
        },
        [&](int row, const std::vector<float>& patterns, const std::vector<uint8_t>& usable) {
          std::fill(row_num.begin(), row_num.end(), 0.0), std::fill(row_den.begin(), row_den.end(), 0.0);
          // Per-point contributions, summed afterwards in column order: the same sums for any thread count.
          std::vector<double> point_num(static_cast<size_t>(grid.cols) * nf, 0.0), point_den(point_num.size(), 0.0);
#pragma omp parallel
          {
            std::vector<FamilyProfile> prof;
#pragma omp for schedule(dynamic)
            for (int col = 0; col < grid.cols; ++col) {
              double* local_num = point_num.data() + static_cast<size_t>(col) * nf;
              double* local_den = point_den.data() + static_cast<size_t>(col) * nf;
              const size_t k = grid.index({row, col});
              if (!usable[col]) {
                r.reason[k] = static_cast<uint8_t>(FractionReason::unusable_pattern);
                continue;
              }
              const int g = ori.grains.id[k];
              if (!ori.orientation[k] || g <= 0) {
                r.reason[k] = static_cast<uint8_t>(FractionReason::no_orientation);
                continue;
              }
              // The grain's reference and binning, unless this point's orientation (kernel mean, corrected
              // like its grain) is too far from the grain's for one reference to serve: then its own.
              const Rotation point = *point_orientation[k] * correction[g];
              const bool own =
                  symmetry.misorientation_angle(point, grain_orientation[g]) > spec.grain_reference_max_rad;
              Reference own_ref;
              if (own) own_ref = build_reference(point);
              const Reference& ref = own ? own_ref : refs[g];
              const float* pattern = patterns.data() + static_cast<size_t>(col) * px;
              profiler.profile(pattern, pre.mask(), rays, own ? point : grain_orientation[g], prof);
              double num = 0, var = 0;
              if (spec.estimator == FractionEstimator::windows) {
                // Off-peak windows only: interior minus flanks per family, over the fundamental contrast.
                const WindowSignals w = window_signals(profiler, prof, spec.windows);
                const double c = contrast(w, fundamental_weight, first_fundamental);
                r.band_contrast[k] = static_cast<float>(c);
                if (!(c > 0) || !(ref.denominator > 0)) {
                  r.reason[k] = static_cast<uint8_t>(FractionReason::no_band_contrast);
                  continue;
                }
                for (size_t f = 0; f < first_fundamental; ++f) {
                  if (ref.a[f] == 0) continue;
                  const double rf = w.s[f] / c, vf = w.var[f] / (c * c);
                  num += ref.a[f] * (rf - ref.r0[f]);
                  var += ref.a[f] * ref.a[f] * vf;
                  local_num[f] += std::abs(ref.r1[f] - ref.r0[f]);
                  local_den[f] += std::sqrt(vf);
                }
                r.raw[k] = static_cast<float>(num / ref.denominator);
                r.uncertainty[k] = static_cast<float>(std::sqrt(var) / ref.denominator);
              } else {
                // Pixel noise of this pattern from differences of horizontal neighbours inside the mask
                // (bands vary little from one pixel to the next): σ = 1.4826 · MAD / √2.
                std::vector<float> diffs;
                diffs.reserve(px);
                for (size_t q = 0; q + 1 < px; ++q)
                  if ((q + 1) % source->width() && pre.mask()[q] && pre.mask()[q + 1])
                    diffs.push_back(std::abs(pattern[q + 1] - pattern[q]));
                std::nth_element(diffs.begin(), diffs.begin() + diffs.size() / 2, diffs.end());
                const double pixel_sd = diffs.empty() ? 0.0 : 1.4826 * diffs[diffs.size() / 2] / std::sqrt(2.0);
                // At a grain boundary the beam sees a second lattice: its pattern, profiled in this
                // grain's frame, is fitted away, and the same is done in the other grain's frame.
                const int other = own ? 0 : neighbour_grain(k);
                const auto cross = other ? cross_profiles.find({g, other}) : cross_profiles.end();
                const PointFit fit = fit_point(prof, ref, cross != cross_profiles.end() ? &cross->second : nullptr,
                                               pixel_sd, local_num, local_den);
                r.band_contrast[k] = static_cast<float>(fit.q);
                if (!fit.ok) {
                  r.reason[k] = static_cast<uint8_t>(FractionReason::no_band_contrast);
                  continue;
                }
                double f = fit.f, v = fit.var;
                if (cross != cross_profiles.end()) {
                  profiler.profile(pattern, pre.mask(), rays, grain_orientation[other], prof);
                  const PointFit second = fit_point(prof, refs[other], &cross_profiles.at({other, g}), pixel_sd);
                  // Both patterns are standardised, so the two scale factors share the beam's volume.
                  const double a = std::max(fit.q, 0.0), b = second.ok ? std::max(second.q, 0.0) : 0.0;
                  if (a + b > 0) {
                    f = (a * fit.f + b * (second.ok ? second.f : 0.0)) / (a + b);
                    v = (a * a * fit.var + b * b * (second.ok ? second.var : 0.0)) / ((a + b) * (a + b));
                  }
                }
                r.raw[k] = static_cast<float>(f);
                r.uncertainty[k] = static_cast<float>(std::sqrt(v));
              }
            }
          }
          for (int col = 0; col < grid.cols; ++col)
            for (size_t f = 0; f < nf; ++f)
              row_num[f] += point_num[static_cast<size_t>(col) * nf + f],
                  row_den[f] += point_den[static_cast<size_t>(col) * nf + f];
          for (size_t f = 0; f < nf; ++f) sep_num[f] += row_num[f], sep_den[f] += row_den[f];
        },
        [&](int row, ByteWriter& out) {
          for (int col = 0; col < grid.cols; ++col) {
            const size_t k = grid.index({row, col});
            out.put<uint8_t>(r.reason[k]);
            out.put<float>(r.raw[k]);
            out.put<float>(r.uncertainty[k]);
            out.put<float>(r.band_contrast[k]);
          }
          for (size_t f = 0; f < nf; ++f) out.put<double>(row_num[f]), out.put<double>(row_den[f]);
        });
  }

  calibrate_end_members(r, spec, grid, learned);
  summarise_grains_and_matrix(r, grid, ori.grains);

  // Diagnostics per family, averaged over grains by their size.
  std::vector<double> share(nf, 0.0), lo(nf, 0.0), hi(nf, 0.0);
  double total_points = 0;
  for (int g = 1; g <= grains; ++g) {
    const double wgt = ori.grains.size[g - 1];
    total_points += wgt;
    for (size_t f = 0; f < first_fundamental; ++f) {
      share[f] +=
          wgt * (refs[g].denominator > 0 ? refs[g].a[f] * (refs[g].r1[f] - refs[g].r0[f]) / refs[g].denominator : 0);
      lo[f] += wgt * refs[g].r0[f], hi[f] += wgt * refs[g].r1[f];
    }
  }
  int largest = 0, largest_size = -1;
  for (int g = 1; g <= grains; ++g)
    if (ori.grains.size[g - 1] > largest_size) largest_size = ori.grains.size[g - 1], largest = g;
  for (size_t f = 0; f < nf; ++f) {
    FamilyDiagnostic d;
    d.label = chosen[f].family.label();
    d.superlattice = f < first_fundamental;
    d.sensitivity = chosen[f].sensitivity;
    if (total_points > 0)
      d.weight = share[f] / total_points, d.disordered_level = lo[f] / total_points,
      d.ordered_level = hi[f] / total_points;
    d.separation = sep_den[f] > 0 ? sep_num[f] / sep_den[f] : 0.0;
    for (int b = 0; b < profiler.bins(); ++b) d.profile_u.push_back(profiler.bin_centre_u(b));
    if (largest > 0) {
      for (int b = 0; b < profiler.bins(); ++b) {
        d.profile_disordered.push_back(refs[largest].profile0[f].mean(b));
        d.profile_ordered.push_back(refs[largest].profile1[f].mean(b));
      }
    }
    if (learned && f < learned_families.difference.size()) {
      d.learned_u = learned_families.u;
      d.learned_difference = learned_families.difference[f];
    }
    r.families.push_back(std::move(d));
  }
  return r;
}

}  // namespace orderband
