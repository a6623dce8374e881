// The kinematic band model.
#include "orderband/band_model.hpp"

#include <cmath>

#include "orderband/electron.hpp"
#include "orderband/error.hpp"
#include "orderband/plane_family.hpp"
#include "orderband/scattering.hpp"

namespace orderband {

KinematicBandModel::KinematicBandModel(const Phase& phase, double kv, const BandModelParams& params) : params_(params) {
  if (!(params.band_contrast >= 0)) fail("band contrast must be >= 0, got ", params.band_contrast);
  if (!(params.band_exponent > 0)) fail("band exponent must be positive, got ", params.band_exponent);
  if (!(params.edge_width > 0)) fail("band edge width must be positive, got ", params.edge_width);
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
  for (ModelFamily& m : families_)
    m.weight = m.f_abs_A > 1e-6 * f_max ? params.band_contrast * std::pow(m.f_abs_A / f_max, params.band_exponent) : 0;
  std::vector<ModelBand> kept;
  for (ModelBand& b : bands_) {
    b.weight = families_[b.family].weight;
    if (b.weight > 0) kept.push_back(b);
  }
  bands_ = std::move(kept);
  // Beyond |u| = 1 + 6e both the step and the edge line are below 1e-5 of the weight.
  for (const ModelBand& b : bands_) sin_reach_.push_back(std::sin(b.theta_b * profile_reach()));
  const int entries = 4096;
  table_scale_ = entries / profile_reach();
  table_.resize(entries + 1);
  for (int k = 0; k <= entries; ++k) table_[k] = profile(k / table_scale_);
}

double KinematicBandModel::profile(double u) const {
  const double e = params_.edge_width;
  const double a = std::abs(u);
  const double step = 0.5 * (1 + std::tanh((1 - a) / e));
  const double edge = params_.edge_contrast * std::exp(-(a - 1) * (a - 1) / (2 * e * e));
  return step + edge;
}

double KinematicBandModel::intensity(const Eigen::Vector3d& x) const {
  double sum = 1.0;
  for (size_t k = 0; k < bands_.size(); ++k) {
    const double s = bands_[k].normal.dot(x);
    if (std::abs(s) >= sin_reach_[k]) continue;
    sum += bands_[k].weight * profile(std::asin(s) / bands_[k].theta_b);
  }
  return sum;
}

}  // namespace orderband
