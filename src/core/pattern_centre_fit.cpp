// Pattern centre refinement by Levenberg–Marquardt over several grains' mean patterns.
#include "orderband/pattern_centre_fit.hpp"

#include <cmath>

#include <Eigen/Dense>

#include "orderband/error.hpp"
#include "orderband/least_squares.hpp"

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

/// The least-squares problem: parameters δ(PC x, PC y, distance) in px when the centre is fitted,
/// then a rotation vector per grain applied before the grain's start orientation; residuals
/// model − data inside the mask, both standardised.
class PatternCentreProblem : public LeastSquaresProblem {
 public:
  PatternCentreProblem(const DetectorGeometrySpec& s, const std::vector<GrainPattern>& g,
                       const std::vector<uint8_t>& mk, const ProcessedModel& md, const PatternCentreFitSpec& spec,
                       bool fit_centre)
      : start_(s), grains_(g), mask_(mk), model_(md), spec_(spec), n_grains_(g.size()), n_centre_(fit_centre ? 3 : 0) {
    if (n_grains_ == 0) fail("pattern-centre fit: no grain to fit");
    px_ = static_cast<size_t>(start_.width_px) * start_.height_px;
    if (mask_.size() != px_) fail("pattern-centre fit: mask of ", mask_.size(), " pixels for ", px_);
    data_.resize(n_grains_);
    for (size_t k = 0; k < n_grains_; ++k) data_[k] = standardised_in_mask(grains_[k].mean.data(), mask_);
    m_ = data_[0].size();
  }

  int parameters() const override { return n_centre_ + 3 * static_cast<int>(n_grains_); }

  DetectorGeometrySpec geometry_of(const Eigen::VectorXd& p) const {
    DetectorGeometrySpec s = start_;
    if (n_centre_ == 0) return s;
    s.pc_px += Eigen::Vector2d(p[0], p[1]);
    s.distance_px += p[2];
    return s;
  }
  Rotation rotation_of(const Eigen::VectorXd& p, size_t g) const {
    const Eigen::Vector3d v = p.segment<3>(n_centre_ + 3 * g);
    return v.norm() > 0 ? Rotation::from_axis_angle(v, v.norm()) * grains_[g].orientation : grains_[g].orientation;
  }
  /// Mean correlation over grains from the cost: Σ(m − d)² = 2 m (1 − r) per grain.
  double correlation_of(double c) const { return 1 - c / (2.0 * m_ * n_grains_); }

  double cost(const Eigen::VectorXd& p) override {
    const DetectorGeometry geometry(geometry_of(p));
    std::vector<std::vector<double>>& r = trial_;
    r.assign(n_grains_, {});
#pragma omp parallel for schedule(dynamic)
    for (long g = 0; g < static_cast<long>(n_grains_); ++g) r[g] = residual(p, g, geometry);
    double c = 0;
    for (const auto& rg : r)
      for (double v : rg) c += v * v;
    return c;
  }
  void accept(const Eigen::VectorXd&) override { current_.swap(trial_); }

  /// JᵀJ and Jᵀr at p (residuals there kept by accept), the Jacobian by forward differences: PC
  /// parameters touch every grain, rotations their own.
  void normal_equations(const Eigen::VectorXd& p, Eigen::MatrixXd& jtj, Eigen::VectorXd& jtr) override {
    jtj = Eigen::MatrixXd::Zero(parameters(), parameters());
    jtr = Eigen::VectorXd::Zero(parameters());
    const std::vector<std::vector<std::vector<double>>> columns = jacobian_columns(p);
    for (size_t g = 0; g < n_grains_; ++g) add_grain(g, columns[g], jtj, jtr);
  }

 private:
  /// Residuals of one grain at parameters p.
  std::vector<double> residual(const Eigen::VectorXd& p, size_t g, const DetectorGeometry& geometry) const {
    std::vector<float> img(px_);
    model_(geometry, rotation_of(p, g), img.data());
    std::vector<double> r = standardised_in_mask(img.data(), mask_);
    for (size_t i = 0; i < m_; ++i) r[i] -= data_[g][i];
    return r;
  }
  /// Per grain, its residuals with each of its parameters (the centre's, then its rotation's) stepped.
  std::vector<std::vector<std::vector<double>>> jacobian_columns(const Eigen::VectorXd& p) const {
    std::vector<std::vector<std::vector<double>>> columns(n_grains_, std::vector<std::vector<double>>(n_centre_ + 3));
    for (int k = 0; k < n_centre_; ++k) {
      Eigen::VectorXd q = p;
      q[k] += spec_.step_px;
      const DetectorGeometry geometry(geometry_of(q));
#pragma omp parallel for schedule(dynamic)
      for (long g = 0; g < static_cast<long>(n_grains_); ++g) columns[g][k] = residual(q, g, geometry);
    }
    const DetectorGeometry geometry(geometry_of(p));
#pragma omp parallel for schedule(dynamic)
    for (long gk = 0; gk < static_cast<long>(3 * n_grains_); ++gk) {
      const size_t g = gk / 3;
      const int k = gk % 3;
      Eigen::VectorXd q = p;
      q[n_centre_ + 3 * g + k] += spec_.step_rad;
      columns[g][n_centre_ + k] = residual(q, g, geometry);
    }
    return columns;
  }
  /// One grain's share of JᵀJ and Jᵀr from its stepped residuals.
  void add_grain(size_t g, const std::vector<std::vector<double>>& stepped, Eigen::MatrixXd& jtj,
                 Eigen::VectorXd& jtr) const {
    const int n = n_centre_ + 3;
    std::vector<int> idx;
    std::vector<double> steps;
    for (int k = 0; k < n_centre_; ++k) idx.push_back(k), steps.push_back(spec_.step_px);
    for (int k = 0; k < 3; ++k) idx.push_back(n_centre_ + 3 * static_cast<int>(g) + k), steps.push_back(spec_.step_rad);
    const std::vector<double>& r0 = current_[g];
    std::vector<std::vector<double>> d(n, std::vector<double>(m_));
    for (int a = 0; a < n; ++a)
      for (size_t i = 0; i < m_; ++i) d[a][i] = (stepped[a][i] - r0[i]) / steps[a];
    for (int a = 0; a < n; ++a) {
      double s = 0;
      for (size_t i = 0; i < m_; ++i) s += d[a][i] * r0[i];
      jtr[idx[a]] += s;
      for (int b = 0; b <= a; ++b) {
        double t = 0;
        for (size_t i = 0; i < m_; ++i) t += d[a][i] * d[b][i];
        jtj(idx[a], idx[b]) += t;
        if (a != b) jtj(idx[b], idx[a]) += t;
      }
    }
  }

  const DetectorGeometrySpec& start_;
  const std::vector<GrainPattern>& grains_;
  const std::vector<uint8_t>& mask_;
  const ProcessedModel& model_;
  const PatternCentreFitSpec& spec_;
  size_t n_grains_, px_ = 0, m_ = 0;
  int n_centre_;
  std::vector<std::vector<double>> data_;             ///< per grain: its mean pattern, standardised in the mask
  std::vector<std::vector<double>> trial_, current_;  ///< per grain: residuals at the trial and the current point
};

LevenbergMarquardtSpec optimiser_spec(const PatternCentreFitSpec& spec, bool fit_centre) {
  LevenbergMarquardtSpec lm;
  lm.max_iterations = spec.max_iterations;
  const double tolerance_px = spec.tolerance_px, tolerance_rad = spec.tolerance_rad;
  if (fit_centre)
    lm.converged = [tolerance_px](const Eigen::VectorXd& step) { return step.head<3>().norm() < tolerance_px; };
  else
    lm.converged = [tolerance_rad](const Eigen::VectorXd& step) { return step.norm() < tolerance_rad; };
  return lm;
}

}  // namespace

PatternCentreFit fit_pattern_centre(const DetectorGeometrySpec& start, const std::vector<GrainPattern>& grains,
                                    const std::vector<uint8_t>& mask, const ProcessedModel& model,
                                    const PatternCentreFitSpec& spec) {
  PatternCentreProblem problem(start, grains, mask, model, spec, true);
  PatternCentreFit out;
  out.geometry = start;
  for (const GrainPattern& g : grains) out.orientation.push_back(g.orientation);
  const LeastSquaresResult fit =
      levenberg_marquardt(problem, Eigen::VectorXd::Zero(problem.parameters()), optimiser_spec(spec, true));
  out.iterations = fit.iterations;
  out.correlation_before = problem.correlation_of(fit.cost_start);
  out.correlation_after = problem.correlation_of(fit.cost);
  const Eigen::VectorXd& p = fit.p;
  const double limit = spec.max_change_px > 0 ? spec.max_change_px : 0.05 * start.width_px;
  if (out.correlation_after > out.correlation_before && p.head<3>().cwiseAbs().maxCoeff() <= limit) {
    out.accepted = true;
    out.geometry = problem.geometry_of(p);
    for (size_t g = 0; g < grains.size(); ++g) out.orientation[g] = problem.rotation_of(p, g);
  } else {
    out.correlation_after = out.correlation_before;
  }
  return out;
}

Rotation fit_grain_orientation(const DetectorGeometrySpec& geometry, const GrainPattern& grain,
                               const std::vector<uint8_t>& mask, const ProcessedModel& model,
                               const PatternCentreFitSpec& spec) {
  const std::vector<GrainPattern> one{grain};
  PatternCentreProblem problem(geometry, one, mask, model, spec, false);
  const LeastSquaresResult fit = levenberg_marquardt(problem, Eigen::VectorXd::Zero(3), optimiser_spec(spec, false));
  return problem.rotation_of(fit.p, 0);
}

}  // namespace orderband
