// Orientation refinement against the kinematic model (the shared Levenberg–Marquardt).
#include "orderband/refine.hpp"

#include <Eigen/Dense>
#include <cmath>
#include <functional>

#include "orderband/least_squares.hpp"

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

namespace {

/// P ≈ a·M(g) + b with g = exp(δ)·g_current: the rotation δ is the parameter, a and b are solved in
/// closed form at every point (variable projection), so the normal equations are those of the
/// five-parameter fit reduced to the rotation by the Schur complement. Each accepted point becomes
/// the next linearisation point, so the steps are exactly the small rotations the model's
/// derivative describes.
class RefineProblem : public LeastSquaresProblem {
 public:
  using Evaluate = std::function<void(const Rotation&, std::vector<double>&, std::vector<Eigen::Vector3d>*)>;
  RefineProblem(const float* pattern, const std::vector<uint32_t>& index, const Rotation& start, Evaluate evaluate)
      : pattern_(pattern), index_(index), evaluate_(std::move(evaluate)) {
    current_.orientation = start;
  }

  int parameters() const override { return 3; }
  double cost(const Eigen::VectorXd& p) override {
    trial_.orientation = rotation_at(p);
    evaluate_(trial_.orientation, trial_.model, &trial_.gradient);
    return fit_linear(trial_);
  }
  void accept(const Eigen::VectorXd& p) override {
    std::swap(current_, trial_);
    current_p_ = p;
  }
  void normal_equations(const Eigen::VectorXd&, Eigen::MatrixXd& jtj, Eigen::VectorXd& jtr) override {
    Eigen::Matrix<double, 5, 5> full = Eigen::Matrix<double, 5, 5>::Zero();
    Eigen::Matrix<double, 5, 1> g = Eigen::Matrix<double, 5, 1>::Zero();
    const State& s = current_;
    for (size_t q = 0; q < s.model.size(); ++q) {
      Eigen::Matrix<double, 5, 1> j;
      j << s.a * s.gradient[q], s.model[q], 1.0;
      full.selfadjointView<Eigen::Lower>().rankUpdate(j);
      g -= j * (pattern_[index_[q]] - (s.a * s.model[q] + s.b));  // Jᵀr with r = model − pattern
    }
    full = full.selfadjointView<Eigen::Lower>();
    const Eigen::Matrix2d d = full.bottomRightCorner<2, 2>();
    const Eigen::Matrix<double, 3, 2> b = full.topRightCorner<3, 2>();
    const Eigen::Matrix<double, 2, 3> d_inv_bt = d.ldlt().solve(b.transpose());
    jtj = full.topLeftCorner<3, 3>() - b * d_inv_bt;
    jtr = g.head<3>() - d_inv_bt.transpose() * g.tail<2>();
  }
  const Rotation& orientation() const { return current_.orientation; }
  /// Pearson r between the pattern and the model at the current point.
  double correlation() const {
    double sp = 0, sm = 0, spp = 0, smm = 0, spm = 0;
    const std::vector<double>& m = current_.model;
    const double n = static_cast<double>(m.size());
    for (size_t q = 0; q < m.size(); ++q) {
      const double p = pattern_[index_[q]];
      sp += p, sm += m[q], spp += p * p, smm += m[q] * m[q], spm += p * m[q];
    }
    const double cov = spm / n - sp / n * sm / n;
    const double var = (spp / n - sp * sp / n / n) * (smm / n - sm * sm / n / n);
    return var > 0 ? cov / std::sqrt(var) : 0.0;
  }

 private:
  struct State {
    Rotation orientation;
    std::vector<double> model;
    std::vector<Eigen::Vector3d> gradient;
    double a = 1, b = 0;
  };
  /// c′ = c + ε × c: the current crystal frame turned by |ε| about ε, ε = p − p_current.
  Rotation rotation_at(const Eigen::VectorXd& p) const {
    const Eigen::Vector3d eps = (p - current_p_).head<3>();
    if (!(eps.norm() > 0)) return current_.orientation;
    return Rotation::from_matrix(Eigen::AngleAxisd(eps.norm(), eps.normalized()).toRotationMatrix() *
                                 current_.orientation.matrix());
  }
  /// a and b by linear least squares at the state's model values; returns Σ (P − a M − b)².
  double fit_linear(State& s) const {
    double sm = 0, smm = 0, sp = 0, spm = 0;
    const double n = static_cast<double>(s.model.size());
    for (size_t q = 0; q < s.model.size(); ++q) {
      const double p = pattern_[index_[q]], m = s.model[q];
      sm += m, smm += m * m, sp += p, spm += p * m;
    }
    const double det = n * smm - sm * sm;
    s.a = det > 0 ? (n * spm - sm * sp) / det : 1.0;
    s.b = (sp - s.a * sm) / n;
    double cost = 0;  // summed directly: the expanded sums would cancel near the minimum
    for (size_t q = 0; q < s.model.size(); ++q) {
      const double r = pattern_[index_[q]] - s.a * s.model[q] - s.b;
      cost += r * r;
    }
    return cost;
  }

  const float* pattern_;
  const std::vector<uint32_t>& index_;
  Evaluate evaluate_;
  State current_, trial_;
  Eigen::VectorXd current_p_ = Eigen::VectorXd::Zero(3);
};

}  // namespace

RefineResult OrientationRefiner::refine(const float* pattern, const Rotation& start) const {
  RefineProblem problem(pattern, index_, start,
                        [this](const Rotation& g, std::vector<double>& m, std::vector<Eigen::Vector3d>* gradient) {
                          evaluate(g, m, gradient);
                        });
  LevenbergMarquardtSpec lm;
  lm.max_iterations = spec_.max_iterations;
  lm.max_step = deg_to_rad(spec_.max_step_deg);
  const double converged_rad = deg_to_rad(spec_.converged_deg);
  lm.converged = [converged_rad](const Eigen::VectorXd& step) { return step.norm() < converged_rad; };
  const LeastSquaresResult fit = levenberg_marquardt(problem, Eigen::VectorXd::Zero(3), lm);
  RefineResult r;
  r.orientation = problem.orientation();
  r.iterations = fit.iterations;
  r.converged = fit.converged;
  r.correlation = problem.correlation();
  return r;
}

}  // namespace orderband
