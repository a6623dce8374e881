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

}  // namespace

PatternCentreFit fit_pattern_centre(const DetectorGeometrySpec& start, const std::vector<GrainPattern>& grains,
                                    const std::vector<uint8_t>& mask, const ProcessedModel& model,
                                    const PatternCentreFitSpec& spec) {
  const size_t n_grains = grains.size();
  if (n_grains == 0) fail("pattern-centre fit: no grain to fit");
  const size_t px = static_cast<size_t>(start.width_px) * start.height_px;
  if (mask.size() != px) fail("pattern-centre fit: mask of ", mask.size(), " pixels for ", px);
  std::vector<std::vector<double>> data(n_grains);
  for (size_t g = 0; g < n_grains; ++g) data[g] = standardised_in_mask(grains[g].mean.data(), mask);
  const size_t m = data[0].size();
  const int n_par = 3 + 3 * static_cast<int>(n_grains);

  // Parameters: δ(PC x, PC y, distance) in px, then a rotation vector per grain applied before
  // the grain's start orientation.
  auto geometry_of = [&](const Eigen::VectorXd& p) {
    DetectorGeometrySpec s = start;
    s.pc_px += Eigen::Vector2d(p[0], p[1]);
    s.distance_px += p[2];
    return s;
  };
  auto rotation_of = [&](const Eigen::VectorXd& p, size_t g) {
    const Eigen::Vector3d v = p.segment<3>(3 + 3 * g);
    return v.norm() > 0 ? Rotation::from_axis_angle(v, v.norm()) * grains[g].orientation : grains[g].orientation;
  };
  // Residuals of one grain (model − data inside the mask) at parameters p.
  auto residual = [&](const Eigen::VectorXd& p, size_t g, const DetectorGeometry& geometry) {
    std::vector<float> img(px);
    model(geometry, rotation_of(p, g), img.data());
    std::vector<double> r = standardised_in_mask(img.data(), mask);
    for (size_t i = 0; i < m; ++i) r[i] -= data[g][i];
    return r;
  };
  auto cost_of = [&](const Eigen::VectorXd& p, std::vector<std::vector<double>>* keep) {
    const DetectorGeometry geometry(geometry_of(p));
    std::vector<std::vector<double>> r(n_grains);
#pragma omp parallel for schedule(dynamic)
    for (long g = 0; g < static_cast<long>(n_grains); ++g) r[g] = residual(p, g, geometry);
    double c = 0;
    for (const auto& rg : r)
      for (double v : rg) c += v * v;
    if (keep) *keep = std::move(r);
    return c;
  };
  // Mean correlation over grains from the cost: Σ(m − d)² = 2 m (1 − r) per grain.
  auto correlation_of = [&](double cost) { return 1 - cost / (2.0 * m * n_grains); };

  PatternCentreFit out;
  out.geometry = start;
  for (const GrainPattern& g : grains) out.orientation.push_back(g.orientation);
  Eigen::VectorXd p = Eigen::VectorXd::Zero(n_par);
  std::vector<std::vector<double>> r0;
  double cost = cost_of(p, &r0);
  out.correlation_before = correlation_of(cost);
  double lambda = 1e-3;
  for (int it = 0; it < spec.max_iterations; ++it) {
    out.iterations = it + 1;
    // Jacobian by forward differences: PC parameters touch every grain, rotations their own.
    Eigen::MatrixXd jtj = Eigen::MatrixXd::Zero(n_par, n_par);
    Eigen::VectorXd jtr = Eigen::VectorXd::Zero(n_par);
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
    bool accepted = false;
    for (int attempt = 0; attempt < 8 && !accepted; ++attempt) {
      Eigen::MatrixXd a = jtj;
      for (int k = 0; k < n_par; ++k) a(k, k) *= 1 + lambda;
      const Eigen::VectorXd step = a.ldlt().solve(-jtr);
      std::vector<std::vector<double>> r1;
      const double c1 = cost_of(p + step, &r1);
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
  out.correlation_after = correlation_of(cost);
  const double limit = spec.max_change_px > 0 ? spec.max_change_px : 0.05 * start.width_px;
  if (out.correlation_after > out.correlation_before && p.head<3>().cwiseAbs().maxCoeff() <= limit) {
    out.accepted = true;
    out.geometry = geometry_of(p);
    for (size_t g = 0; g < n_grains; ++g) out.orientation[g] = rotation_of(p, g);
  } else {
    out.correlation_after = out.correlation_before;
  }
  return out;
}

}  // namespace orderband
