// What every part of the fraction stage shares: families, the model as the data show it, the scan.
#include "fraction_context.hpp"

#include <algorithm>
#include <cmath>
#include <map>

#include <Eigen/Dense>

#include "orderband/error.hpp"
#include "orderband/gaussian_blur.hpp"
#include "orderband/grains.hpp"
#include "orderband/laue_group.hpp"

namespace orderband {

FractionFamilies choose_fraction_families(const OrderingPair& pair, double kv, const FractionSpec& spec) {
  const std::vector<PairFamily> table = pair_family_table(pair, kv, spec.d_min_A);
  FractionFamilies out;
  for (const PairFamily& f : table)
    if (f.sensitivity >= spec.sensitivity_threshold) out.chosen.push_back(f);
  out.first_fundamental = out.chosen.size();
  if (out.first_fundamental == 0)
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
  for (const PairFamily& f : fundamentals) out.fundamental_weight.push_back(f.rel_intensity_disordered);
  out.chosen.insert(out.chosen.end(), fundamentals.begin(), fundamentals.end());
  for (const PairFamily& f : out.chosen) {
    ProfileFamily p;
    p.label = f.family.label();
    p.theta_b = f.sensitivity >= spec.sensitivity_threshold ? f.bragg_ordered_rad : f.bragg_disordered_rad;
    for (const CrystalDirection& d : f.family.normals) p.normals.push_back(d.vec());
    out.profile.push_back(p);
  }
  return out;
}

namespace {

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

/// The processing of model patterns: the data's, without the hot-pixel filter, with the data's
/// static background given directly (or none if the data have none).
PreprocessSpec model_processing(const PreprocessSpec& data_spec, bool data_has_static_background) {
  PreprocessSpec spec = data_spec;
  spec.hot_pixel_filter = false;
  spec.static_background = data_has_static_background ? StaticBackgroundKind::file : StaticBackgroundKind::none;
  return spec;
}

/// B̂ (FractionModel): fitted to the scan mean from the grains' model patterns weighted by their
/// share of the scan; a user's flat field is the detector background itself; 1 without either.
std::vector<float> detector_background_for(const PatternRenderer& renderer, const DetectorGeometry& geometry,
                                           const Preprocessor& data, const PreprocessSpec& data_spec,
                                           const GrainMap& grains_map) {
  const size_t pixels = static_cast<size_t>(data.width()) * data.height();
  const std::vector<float> data_static = data.static_background();
  if (data_static.empty()) return std::vector<float>(pixels, 1.0f);
  if (data_spec.static_background != StaticBackgroundKind::scan_mean) return data_static;
  const int grains = grains_map.count();
  std::vector<std::vector<float>> grain_model(grains + 1);
  double total = 0;
  for (int g = 1; g <= grains; ++g) total += grains_map.size[g - 1];
#pragma omp parallel for schedule(dynamic)
  for (int g = 1; g <= grains; ++g) {
    grain_model[g].resize(pixels);
    renderer.expected({{grains_map.mean[g - 1], false, 1.0, 0}}, geometry, grain_model[g].data());
  }
  std::vector<float> model_mean(pixels, 0.0f);
  for (int g = 1; g <= grains; ++g)
    for (size_t q = 0; q < model_mean.size(); ++q)
      model_mean[q] += static_cast<float>(grain_model[g][q] * grains_map.size[g - 1] / std::max(total, 1.0));
  const double sigma =
      data_spec.static_background_sigma_px < 0 ? 0.1 * data.width() : data_spec.static_background_sigma_px;
  return fit_detector_background(data_static, model_mean, data.mask(), data.width(), data.height(), sigma);
}

}  // namespace

FractionModel::FractionModel(const OrderingPair& pair, double kv, const DetectorGeometry& geometry,
                             const Preprocessor& data, const PreprocessSpec& data_spec, const GrainMap& grains,
                             const PhaseSpheres& spheres, double sphere_contrast)
    : ordered_(pair.ordered, kv, BandModelParams{}),
      disordered_(pair.disordered, kv, with_families_of(BandModelParams{}, pair.disordered, pair.ordered)),
      renderer_(geometry, ordered_, disordered_, 1000.0, 0.0),
      pixels_(static_cast<size_t>(data.width()) * data.height()),
      spec_(model_processing(data_spec, !data.static_background().empty())),
      processing_(spec_, data.width(), data.height(), data.static_background()) {
  if (spheres.ordered || spheres.disordered) renderer_.use_spheres(spheres, sphere_contrast);
  detector_background_ = detector_background_for(renderer_, geometry, data, data_spec, grains);
}

void FractionModel::phase(const Preprocessor& processing, const DetectorGeometry& geo, const Rotation& g, bool ordered,
                          float* out) const {
  renderer_.expected({{g, ordered, 1.0, 0}}, geo, out);
  for (size_t q = 0; q < pixels_; ++q) out[q] *= detector_background_[q];
  processing.apply(out);
}

FractionScan::FractionScan(const ScanInputs& inputs, const OrientationResults& ori_, const FractionSpec& spec_)
    : config(inputs.config),
      ori(ori_),
      spec(spec_),
      grid(inputs.config.grid),
      n(inputs.config.grid.count()),
      grains(ori_.grains.count()),
      pair(inputs.phases),
      families(choose_fraction_families(pair, inputs.config.kv, spec_)),
      profiler(families.profile, spec_.profile),
      source(inputs.patterns.get()),
      geometry(inputs.geometry()),
      rays(geometry),
      pre(inputs.preprocessor()),
      model(std::make_unique<FractionModel>(pair, inputs.config.kv, geometry, pre, inputs.config.preprocess,
                                            ori_.grains, spec_.reference_spheres, spec_.reference_sphere_contrast)),
      symmetry(laue_rotations(pair.disordered)),
      point_orientation(
          kernel_mean_orientations(grid, ori_.orientation, ori_.grains, symmetry, spec_.orientation_kernel_radius)),
      grain_orientation(grains + 1),
      correction(grains + 1),
      reach(beam_reach(inputs.config)) {
  for (int g = 1; g <= grains; ++g) grain_orientation[g] = ori.grains.mean[g - 1];
}

std::vector<int> FractionScan::grains_within_reach(size_t k) const {
  std::map<int, int> votes;
  for (const GridPoint& nb : grid.within_reach(grid.point(k), reach.rows, reach.cols)) {
    const int id = ori.grains.id[grid.index(nb)];
    if (id > 0 && id != ori.grains.id[k]) votes[id] += 1;
  }
  std::vector<std::pair<int, int>> ranked(votes.begin(), votes.end());
  // Most points first; among equals the lower id (the order a map iterates in).
  std::stable_sort(ranked.begin(), ranked.end(), [](const auto& a, const auto& b) { return a.second > b.second; });
  std::vector<int> out;
  for (const auto& [id, v] : ranked) out.push_back(id);
  return out;
}

int FractionScan::neighbour_grain(size_t k) const {
  const std::vector<int> others = grains_within_reach(k);
  return others.empty() ? 0 : others.front();
}

CrossProfiles FractionScan::cross_profiles(const BandProfiler& by, const Preprocessor& processing,
                                           const std::vector<std::vector<float>>& measured) const {
  const size_t nf = families.count();
  std::vector<std::vector<int>> touching(grains + 1);
  for (size_t k = 0; k < n; ++k) {
    const int g = ori.grains.id[k];
    if (g <= 0) continue;
    for (const GridPoint& nb : grid.within_reach(grid.point(k), reach.rows, reach.cols)) {
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
    std::vector<float> img(pixels());
    if (static_cast<size_t>(g2) < measured.size() && !measured[g2].empty())
      img = measured[g2];
    else
      model->phase(processing, geometry, grain_orientation[g2], false, img.data());
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
}

std::vector<float> GrainPatternSums::mean(int g) const {
  std::vector<float> m(sum[g].size());
  for (size_t q = 0; q < m.size(); ++q) m[q] = static_cast<float>(sum[g][q] / count[g]);
  return m;
}

GrainPatternSums FractionScan::sum_grain_patterns(const Preprocessor& processing,
                                                  const std::function<bool(size_t)>& eligible) const {
  std::vector<std::vector<size_t>> members(grains + 1);
  for (size_t k = 0; k < n; ++k)
    if (const int g = ori.grains.id[k]; g > 0 && eligible(k)) members[g].push_back(k);
  GrainPatternSums s;
  s.sum.resize(grains + 1);
  s.count.assign(grains + 1, 0);
  s.size.assign(grains + 1, 0);
  std::vector<size_t> chosen;
  for (int g = 0; g <= grains; ++g) {
    s.size[g] = static_cast<int>(members[g].size());
    const std::vector<size_t> sample = spread_sample(members[g], spec.grain_pattern_points);
    chosen.insert(chosen.end(), sample.begin(), sample.end());
  }
  std::sort(chosen.begin(), chosen.end());
  PreprocessedPoints reader(*source, grid, processing);
  reader.load_in_batches(
      chosen, 256,
      [&](const std::vector<size_t>& batch, const std::vector<float>& pats, const std::vector<uint8_t>& ok) {
        for (size_t i = 0; i < batch.size(); ++i) {
          if (!ok[i]) continue;
          const int g = ori.grains.id[batch[i]];
          if (s.sum[g].empty()) s.sum[g].assign(pixels(), 0.0);
          const float* p = pats.data() + i * pixels();
          for (size_t q = 0; q < pixels(); ++q) s.sum[g][q] += p[q];
          s.count[g] += 1;
        }
      });
  return s;
}

}  // namespace orderband
