// The kinematic band model.
#include "orderband/band_model.hpp"

#include <Eigen/LU>

#include <algorithm>
#include <cmath>

#include "orderband/electron.hpp"
#include "orderband/error.hpp"
#include "orderband/plane_family.hpp"
#include "orderband/scattering.hpp"

namespace orderband {

BandModelParams with_families_of(const BandModelParams& params, const Phase& phase, const Phase& reference) {
  const double v = std::abs(phase.cell.orth.determinant()), v_ref = std::abs(reference.cell.orth.determinant());
  if (!(v > 0) || !(v_ref > 0)) fail("band model: a unit cell without volume");
  BandModelParams matched = params;
  matched.d_min_A = params.d_min_A * std::cbrt(v / v_ref);
  return matched;
}

KinematicBandModel::KinematicBandModel(const Phase& phase, double kv, const BandModelParams& params) : params_(params) {
  if (!(params.band_amplitude >= 0)) fail("band amplitude must be >= 0, got ", params.band_amplitude);
  if (!(params.band_exponent > 0)) fail("band exponent must be positive, got ", params.band_exponent);
  if (!(params.edge_width > 0)) fail("band edge width must be positive, got ", params.edge_width);
  if (!(std::abs(params.edge_asymmetry) <= 1))
    fail("edge asymmetry must be within [-1, 1], got ", params.edge_asymmetry);
  const double lambda = electron_wavelength_A(kv);
  double f_max = 0;
  for (const PlaneFamily& fam : enumerate_plane_families(phase, params.d_min_A)) {
    if (2 * fam.d_A < lambda) continue;
    ModelFamily m{fam.hkl, fam.d_A, bragg_angle_rad(fam.d_A, lambda), std::abs(structure_factor_A(phase, fam.hkl)), 0};
    f_max = std::max(f_max, m.f_abs_A);
    families_.push_back(m);
    for (const CrystalDirection& n : fam.normals)
      bands_.push_back({n.vec(), m.theta_b, 0.0, static_cast<int>(families_.size() - 1)});
  }
  if (!(f_max > 0)) fail(phase.source, ": no diffracting plane family with d >= ", params.d_min_A, " A");
  for (ModelFamily& m : families_) {
    m.weight = m.f_abs_A > 1e-6 * f_max ? params.band_amplitude * std::pow(m.f_abs_A / f_max, params.band_exponent) : 0;
    m.edge_contrast = params.edge_contrast;
  }
  std::vector<ModelBand> kept;
  for (ModelBand& b : bands_) {
    b.weight = families_[b.family].weight;
    if (b.weight > 0) kept.push_back(b);
  }
  bands_ = std::move(kept);
  // Beyond the reach both the band and its edge lines are below 1e-5 of the weight.
  reach_ = 1 + 6 * params_.edge_width;
  if (params_.shape == BandShape::gaussian) reach_ = std::max(reach_, 5 * 0.8);
  for (const ModelBand& b : bands_) sin_reach_.push_back(std::sin(b.theta_b * profile_reach()));
  build_tables();
}

void KinematicBandModel::build_tables() {
  // One table per distinct edge contrast (table 0: the params' own).
  const int entries = 8192;
  table_scale_ = entries / (2 * reach_);
  std::vector<double> contrasts{params_.edge_contrast};
  for (ModelFamily& m : families_) {
    const auto it = std::find(contrasts.begin(), contrasts.end(), m.edge_contrast);
    m.table = static_cast<int>(it - contrasts.begin());
    if (it == contrasts.end()) contrasts.push_back(m.edge_contrast);
  }
  tables_.assign(contrasts.size(), std::vector<double>(entries + 1));
  for (size_t t = 0; t < contrasts.size(); ++t)
    for (int k = 0; k <= entries; ++k) tables_[t][k] = profile(-reach_ + k / table_scale_, contrasts[t]);
}

void KinematicBandModel::adjust_family(size_t family, double weight_factor, double edge_contrast) {
  if (family >= families_.size()) fail("band model: no family ", family);
  if (!(weight_factor >= 0)) fail("band model: family weight factor must be >= 0, got ", weight_factor);
  families_[family].weight *= weight_factor;
  families_[family].edge_contrast = edge_contrast;
  for (ModelBand& b : bands_)
    if (b.family == static_cast<int>(family)) b.weight = families_[family].weight;
  build_tables();
}

double KinematicBandModel::profile(double u, double edge_contrast) const {
  const double e = params_.edge_width;
  const double a = std::abs(u);
  double step = 0;
  switch (params_.shape) {
    case BandShape::soft:
      step = 0.5 * (1 + std::tanh((1 - a) / e));
      break;
    case BandShape::flat:
      step = a < 1 ? 1.0 : (a == 1 ? 0.5 : 0.0);
      break;
    case BandShape::gaussian:
      step = std::exp(-a * a / (2 * 0.8 * 0.8));
      break;
  }
  const double side = 1 + params_.edge_asymmetry * (u > 0 ? 1 : (u < 0 ? -1 : 0));
  const double edge = edge_contrast * side * std::exp(-(a - 1) * (a - 1) / (2 * e * e));
  return step + edge;
}

double KinematicBandModel::intensity(const Eigen::Vector3d& x) const {
  double sum = 1.0;
  for (size_t k = 0; k < bands_.size(); ++k) {
    const double s = bands_[k].normal.dot(x);
    if (std::abs(s) >= sin_reach_[k]) continue;
    sum += bands_[k].weight * profile(std::asin(s) / bands_[k].theta_b, families_[bands_[k].family].edge_contrast);
  }
  return sum;
}

}  // namespace orderband
