// Gauss–Newton orientation refinement against the kinematic model.
#include "orderband/refine.hpp"

#include <Eigen/Dense>
#include <cmath>

#include "orderband/units.hpp"

namespace orderband {

OrientationRefiner::OrientationRefiner(const KinematicBandModel& model, const DetectorRays& rays,
                                       const std::vector<uint8_t>& mask, const RefineSpec& spec)
    : model_(model), spec_(spec) {
  for (size_t q = 0; q < rays.direction.size(); ++q)
    if (mask.empty() || mask[q]) {
      dirs_.push_back(rays.direction[q].cast<float>());
      index_.push_back(static_cast<uint32_t>(q));
    }
  // p′(u) by central differences of the exact profile, tabulated like the profile itself.
  const int entries = 4096;
  table_scale_ = entries / model.profile_reach();
  derivative_table_.resize(entries + 1);
  const double h = 1e-4;
  for (int k = 0; k <= entries; ++k) {
    const double u = k / table_scale_;
    derivative_table_[k] = (model.profile(u + h) - model.profile(u - h)) / (2 * h);
  }
}

void OrientationRefiner::evaluate(const Rotation& g, std::vector<double>& m, std::vector<Eigen::Vector3d>* gradient,
                                  int stride) const {
  const size_t n = (dirs_.size() + stride - 1) / stride;  // model values for mask pixels 0, stride, 2·stride …
  m.assign(n, 0.0);
  if (gradient) gradient->assign(n, Eigen::Vector3d::Zero());
  const Eigen::Matrix3f gm = g.matrix().cast<float>();
  std::vector<Eigen::Vector3f> c(n);
  for (size_t q = 0; q < n; ++q) c[q] = gm * dirs_[q * stride];
  std::vector<float> dot(n);
  for (const ModelBand& band : model_.bands()) {
    const Eigen::Vector3f nb = band.normal.cast<float>();
    const float reach = static_cast<float>(std::sin(band.theta_b * model_.profile_reach()));
    for (size_t q = 0; q < n; ++q) dot[q] = nb.dot(c[q]);
    const double inv_theta = 1.0 / band.theta_b;
    for (size_t q = 0; q < n; ++q) {
      if (std::abs(dot[q]) >= reach) continue;
      const double x = dot[q];
      const double u = (x + x * x * x / 6) * inv_theta;
      m[q] += band.weight * model_.profile_table(u);
      if (gradient) {
        const double au = std::abs(u) * table_scale_;
        const size_t k = static_cast<size_t>(au);
        if (k + 1 >= derivative_table_.size()) continue;
        const double t = au - k;
        double dp = derivative_table_[k] + t * (derivative_table_[k + 1] - derivative_table_[k]);
        if (u < 0) dp = -dp;  // p is even, p′ odd
        const Eigen::Vector3d cxn = c[q].cast<double>().cross(band.normal);
        (*gradient)[q] += band.weight * dp * inv_theta / std::sqrt(1 - x * x) * cxn;
      }
    }
  }
}

double OrientationRefiner::correlation(const float* pattern, const Rotation& g, bool coarse) const {
  std::vector<double> m;
  const int stride = coarse ? 2 : 1;
  evaluate(g, m, nullptr, stride);
  double sp = 0, sm = 0, spp = 0, smm = 0, spm = 0;
  const double n = static_cast<double>(m.size());
  for (size_t q = 0; q < m.size(); ++q) {
    const double p = pattern[index_[q * stride]];
    sp += p, sm += m[q], spp += p * p, smm += m[q] * m[q], spm += p * m[q];
  }
  const double cov = spm / n - sp / n * sm / n;
  const double var = (spp / n - sp * sp / n / n) * (smm / n - sm * sm / n / n);
  return var > 0 ? cov / std::sqrt(var) : 0.0;
}

RefineResult OrientationRefiner::refine(const float* pattern, const Rotation& start) const {
  RefineResult r;
  r.orientation = start;
  std::vector<double> m;
  std::vector<Eigen::Vector3d> grad;
  double a = 1, b = 0;
  for (int it = 0; it < spec_.max_iterations; ++it) {
    evaluate(r.orientation, m, &grad);
    // Linear parameters first (closed form), then the Gauss–Newton step for all five.
    double sm = 0, smm = 0, sp = 0, spm = 0;
    const double n = static_cast<double>(m.size());
    for (size_t q = 0; q < m.size(); ++q) {
      const double p = pattern[index_[q]];
      sm += m[q], smm += m[q] * m[q], sp += p, spm += p * m[q];
    }
    const double det = n * smm - sm * sm;
    if (det > 0) a = (n * spm - sm * sp) / det, b = (sp - a * sm) / n;
    Eigen::Matrix<double, 5, 5> JtJ = Eigen::Matrix<double, 5, 5>::Zero();
    Eigen::Matrix<double, 5, 1> Jtr = Eigen::Matrix<double, 5, 1>::Zero();
    for (size_t q = 0; q < m.size(); ++q) {
      Eigen::Matrix<double, 5, 1> j;
      j << a * grad[q], m[q], 1.0;
      const double res = pattern[index_[q]] - (a * m[q] + b);
      JtJ.selfadjointView<Eigen::Lower>().rankUpdate(j);
      Jtr += j * res;
    }
    const Eigen::Matrix<double, 5, 5> full = JtJ.selfadjointView<Eigen::Lower>();
    const Eigen::Matrix<double, 5, 1> step = full.ldlt().solve(Jtr);
    Eigen::Vector3d eps = step.head<3>();
    if (!eps.allFinite()) break;
    const double angle = eps.norm(), max_step = deg_to_rad(spec_.max_step_deg);
    if (angle > max_step) eps *= max_step / angle;
    // c' = c + ε × c: a rotation of the crystal frame by |ε| about ε.
    if (eps.norm() > 0)
      r.orientation = Rotation::from_matrix(Eigen::AngleAxisd(eps.norm(), eps.normalized()).toRotationMatrix() *
                                            r.orientation.matrix());
    r.iterations = it + 1;
    if (rad_to_deg(eps.norm()) < spec_.converged_deg) {
      r.converged = true;
      break;
    }
  }
  r.correlation = correlation(pattern, r.orientation);
  return r;
}

}  // namespace orderband
