// Pattern centre refinement by Levenberg–Marquardt over several grains' mean patterns.
#include "orderband/pattern_centre_fit.hpp"

#include <cmath>

#include <Eigen/Dense>

#include "orderband/error.hpp"

namespace orderband {

namespace {

/// Mean-pattern values inside the mask, standardised (zero mean, unit variance).
std::vector<double> standardised_in_mask(const float* values, const std::vector<uint8_t>& mask) {
  std::vector<double> out;
  double s = 0, s2 = 0;
  for (size_t q = 0; q < mask.size(); ++q)
    if (mask[q]) out.push_back(values[q]), s += values[q], s2 += double(values[q]) * values[q];
  const double m = s / out.size(), sd = std::sqrt(std::max(s2 / out.size() - m * m, 1e-300));
  for (double& v : out) v = (v - m) / sd;
  return out;
}

/// The least-squares problem: parameters δ(PC x, PC y, distance) in px, then a rotation vector
/// per grain applied before the grain's start orientation; residuals model − data inside the mask.
struct PatternCentreProblem {
  const DetectorGeometrySpec& start;
  const std::vector<GrainPattern>& grains;
  const std::vector<uint8_t>& mask;
  const ProcessedModel& model;
  size_t n_grains, px, m;
  int n_par;
  std::vector<std::vector<double>> data;  ///< per grain: its mean pattern, standardised in the mask

  PatternCentreProblem(const DetectorGeometrySpec& s, const std::vector<GrainPattern>& g,
                       const std::vector<uint8_t>& mk, const ProcessedModel& md)
      : start(s), grains(g), mask(mk), model(md), n_grains(g.size()) {
    if (n_grains == 0) fail("pattern-centre fit: no grain to fit");
    px = static_cast<size_t>(start.width_px) * start.height_px;
    if (mask.size() != px) fail("pattern-centre fit: mask of ", mask.size(), " pixels for ", px);
    data.resize(n_grains);
    for (size_t k = 0; k < n_grains; ++k) data[k] = standardised_in_mask(grains[k].mean.data(), mask);
    m = data[0].size();
    n_par = 3 + 3 * static_cast<int>(n_grains);
  }

  DetectorGeometrySpec geometry_of(const Eigen::VectorXd& p) const {
    DetectorGeometrySpec s = start;
    s.pc_px += Eigen::Vector2d(p[0], p[1]);
    s.distance_px += p[2];
    return s;
  }
  Rotation rotation_of(const Eigen::VectorXd& p, size_t g) const {
    const Eigen::Vector3d v = p.segment<3>(3 + 3 * g);
    return v.norm() > 0 ? Rotation::from_axis_angle(v, v.norm()) * grains[g].orientation : grains[g].orientation;
  }
  /// Residuals of one grain at parameters p.
  std::vector<double> residual(const Eigen::VectorXd& p, size_t g, const DetectorGeometry& geometry) const {
    std::vector<float> img(px);
    model(geometry, rotation_of(p, g), img.data());
    std::vector<double> r = standardised_in_mask(img.data(), mask);
    for (size_t i = 0; i < m; ++i) r[i] -= data[g][i];
    return r;
  }
  double cost(const Eigen::VectorXd& p, std::vector<std::vector<double>>* keep) const {
    const DetectorGeometry geometry(geometry_of(p));
    std::vector<std::vector<double>> r(n_grains);
#pragma omp parallel for schedule(dynamic)
    for (long g = 0; g < static_cast<long>(n_grains); ++g) r[g] = residual(p, g, geometry);
    double c = 0;
    for (const auto& rg : r)
      for (double v : rg) c += v * v;
    if (keep) *keep = std::move(r);
    return c;
  }
  /// Mean correlation over grains from the cost: Σ(m − d)² = 2 m (1 − r) per grain.
  double correlation_of(double c) const { return 1 - c / (2.0 * m * n_grains); }

  /// JᵀJ and Jᵀr at p (residuals r0 there), the Jacobian by forward differences: PC parameters
  /// touch every grain, rotations their own.
  void normal_equations(const Eigen::VectorXd& p, const std::vector<std::vector<double>>& r0,
                        const PatternCentreFitSpec& spec, Eigen::MatrixXd& jtj, Eigen::VectorXd& jtr) const {
    jtj = Eigen::MatrixXd::Zero(n_par, n_par);
    jtr = Eigen::VectorXd::Zero(n_par);
    std::vector<std::vector<std::vector<double>>> columns(n_grains, std::vector<std::vector<double>>(6));
    for (int k = 0; k < 3; ++k) {
      Eigen::VectorXd q = p;
      q[k] += spec.step_px;
      const DetectorGeometry geometry(geometry_of(q));
#pragma omp parallel for schedule(dynamic)
      for (long g = 0; g < static_cast<long>(n_grains); ++g) columns[g][k] = residual(q, g, geometry);
    }
    {
      const DetectorGeometry geometry(geometry_of(p));
#pragma omp parallel for schedule(dynamic)
      for (long gk = 0; gk < static_cast<long>(3 * n_grains); ++gk) {
        const size_t g = gk / 3;
        const int k = gk % 3;
        Eigen::VectorXd q = p;
        q[3 + 3 * g + k] += spec.step_rad;
        columns[g][3 + k] = residual(q, g, geometry);
      }
    }
    for (size_t g = 0; g < n_grains; ++g) {
      const int idx[6] = {
          0, 1, 2, static_cast<int>(3 + 3 * g), static_cast<int>(4 + 3 * g), static_cast<int>(5 + 3 * g)};
      const double steps[6] = {spec.step_px, spec.step_px, spec.step_px, spec.step_rad, spec.step_rad, spec.step_rad};
      std::vector<std::vector<double>> d(6, std::vector<double>(m));
      for (int a = 0; a < 6; ++a)
        for (size_t i = 0; i < m; ++i) d[a][i] = (columns[g][a][i] - r0[g][i]) / steps[a];
      for (int a = 0; a < 6; ++a) {
        double s = 0;
        for (size_t i = 0; i < m; ++i) s += d[a][i] * r0[g][i];
        jtr[idx[a]] += s;
        for (int b = 0; b <= a; ++b) {
          double t = 0;
          for (size_t i = 0; i < m; ++i) t += d[a][i] * d[b][i];
          jtj(idx[a], idx[b]) += t;
          if (a != b) jtj(idx[b], idx[a]) += t;
        }
      }
    }
  }
};

}  // namespace

PatternCentreFit fit_pattern_centre(const DetectorGeometrySpec& start, const std::vector<GrainPattern>& grains,
                                    const std::vector<uint8_t>& mask, const ProcessedModel& model,
                                    const PatternCentreFitSpec& spec) {
  const PatternCentreProblem problem(start, grains, mask, model);
  PatternCentreFit out;
  out.geometry = start;
  for (const GrainPattern& g : grains) out.orientation.push_back(g.orientation);
  Eigen::VectorXd p = Eigen::VectorXd::Zero(problem.n_par);
  std::vector<std::vector<double>> r0;
  double cost = problem.cost(p, &r0);
  out.correlation_before = problem.correlation_of(cost);
  double lambda = 1e-3;
  for (int it = 0; it < spec.max_iterations; ++it) {
    out.iterations = it + 1;
    Eigen::MatrixXd jtj;
    Eigen::VectorXd jtr;
    problem.normal_equations(p, r0, spec, jtj, jtr);
    // Levenberg–Marquardt: the damping grows until a step lowers the cost.
    bool accepted = false;
    for (int attempt = 0; attempt < 8 && !accepted; ++attempt) {
      Eigen::MatrixXd a = jtj;
      for (int k = 0; k < problem.n_par; ++k) a(k, k) *= 1 + lambda;
      const Eigen::VectorXd step = a.ldlt().solve(-jtr);
      std::vector<std::vector<double>> r1;
      const double c1 = problem.cost(p + step, &r1);
      if (c1 < cost) {
        p += step;
        cost = c1;
        r0 = std::move(r1);
        lambda = std::max(lambda / 3, 1e-7);
        accepted = true;
        if (step.head<3>().norm() < spec.tolerance_px) it = spec.max_iterations;
      } else {
        lambda *= 4;
      }
    }
    if (!accepted) break;
  }
  out.correlation_after = problem.correlation_of(cost);
  const double limit = spec.max_change_px > 0 ? spec.max_change_px : 0.05 * start.width_px;
  if (out.correlation_after > out.correlation_before && p.head<3>().cwiseAbs().maxCoeff() <= limit) {
    out.accepted = true;
    out.geometry = problem.geometry_of(p);
    for (size_t g = 0; g < problem.n_grains; ++g) out.orientation[g] = problem.rotation_of(p, g);
  } else {
    out.correlation_after = out.correlation_before;
  }
  return out;
}

}  // namespace orderband
