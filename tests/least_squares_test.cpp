// The shared Levenberg–Marquardt on standard test problems with published minima.
#include <gtest/gtest.h>

#include <cmath>
#include <functional>

#include "orderband/least_squares.hpp"

namespace orderband {
namespace {

/// A problem from a residual function and its Jacobian.
class Residuals : public LeastSquaresProblem {
 public:
  using Fn = std::function<void(const Eigen::VectorXd& p, Eigen::VectorXd& r, Eigen::MatrixXd& j)>;
  Residuals(int n, Fn fn) : n_(n), fn_(std::move(fn)) {}
  int parameters() const override { return n_; }
  double cost(const Eigen::VectorXd& p) override {
    ++evaluations;
    Eigen::MatrixXd j;
    fn_(p, trial_, j);
    return trial_.squaredNorm();
  }
  void accept(const Eigen::VectorXd&) override { current_ = trial_; }
  void normal_equations(const Eigen::VectorXd& p, Eigen::MatrixXd& jtj, Eigen::VectorXd& jtr) override {
    Eigen::VectorXd r;
    Eigen::MatrixXd j;
    fn_(p, r, j);
    EXPECT_EQ(r, current_);  // the current point is the last accepted one
    jtj = j.transpose() * j;
    jtr = j.transpose() * r;
  }
  int evaluations = 0;

 private:
  int n_;
  Fn fn_;
  Eigen::VectorXd trial_, current_;
};

TEST(LevenbergMarquardt, RosenbrockFromTheStandardStart) {
  // r = (10 (x2 − x1²), 1 − x1) from (−1.2, 1): minimum 0 at (1, 1) (Moré, Garbow & Hillstrom,
  // ACM TOMS 7 (1981) 17, problem 1).
  Residuals rosenbrock(2, [](const Eigen::VectorXd& x, Eigen::VectorXd& r, Eigen::MatrixXd& j) {
    r = Eigen::Vector2d(10 * (x[1] - x[0] * x[0]), 1 - x[0]);
    j.resize(2, 2);
    j << -20 * x[0], 10, -1, 0;
  });
  LevenbergMarquardtSpec spec;
  spec.max_iterations = 100;
  const LeastSquaresResult r = levenberg_marquardt(rosenbrock, Eigen::Vector2d(-1.2, 1), spec);
  EXPECT_NEAR(r.p[0], 1.0, 1e-8);
  EXPECT_NEAR(r.p[1], 1.0, 1e-8);
  EXPECT_LT(r.cost, 1e-16);
  EXPECT_NEAR(r.cost_start, 24.2, 1e-12);  // 10² (1 − 1.44)² + 2.2²
}

TEST(LevenbergMarquardt, BardFunctionReachesItsPublishedMinimum) {
  // Moré, Garbow & Hillstrom (1981), problem 8: Σ r² = 8.21487e-3 at the minimum (value from
  // memory; scipy.optimize.least_squares gives 8.214877e-3 at (0.08241, 1.13304, 2.34370)).
  const double y[15] = {0.14, 0.18, 0.22, 0.25, 0.29, 0.32, 0.35, 0.39, 0.37, 0.58, 0.73, 0.96, 1.34, 2.10, 4.39};
  Residuals bard(3, [&](const Eigen::VectorXd& x, Eigen::VectorXd& r, Eigen::MatrixXd& j) {
    r.resize(15), j.resize(15, 3);
    for (int i = 1; i <= 15; ++i) {
      const double u = i, v = 16 - i, w = std::min(u, v), d = v * x[1] + w * x[2];
      r[i - 1] = y[i - 1] - (x[0] + u / d);
      j.row(i - 1) << -1, u * v / (d * d), u * w / (d * d);
    }
  });
  LevenbergMarquardtSpec spec;
  spec.max_iterations = 100;
  spec.converged = [](const Eigen::VectorXd& step) { return step.norm() < 1e-9; };
  const LeastSquaresResult r = levenberg_marquardt(bard, Eigen::Vector3d(1, 1, 1), spec);
  EXPECT_TRUE(r.converged);
  EXPECT_NEAR(r.cost, 8.214877e-3, 1e-9);
  EXPECT_NEAR(r.p[0], 0.08241056, 1e-6);
  EXPECT_NEAR(r.p[1], 1.13303612, 1e-6);
  EXPECT_NEAR(r.p[2], 2.34369515, 1e-6);
}

TEST(LevenbergMarquardt, StepsAreShortenedToTheLimitAndTheCostNeverRises) {
  // r = p − (3, 4): the Gauss–Newton step is the whole way (length 5); with a limit of 0.5 every step is 0.5 long along
  // the direction to the target.
  Residuals shift(2, [](const Eigen::VectorXd& x, Eigen::VectorXd& r, Eigen::MatrixXd& j) {
    r = x - Eigen::Vector2d(3, 4);
    j = Eigen::Matrix2d::Identity();
  });
  LevenbergMarquardtSpec spec;
  spec.max_step = 0.5, spec.max_iterations = 4;
  LeastSquaresResult r = levenberg_marquardt(shift, Eigen::Vector2d::Zero(), spec);
  EXPECT_NEAR(r.p.norm(), 2.0, 1e-12);        // four steps of 0.5
  EXPECT_NEAR(r.p[0] / r.p[1], 0.75, 1e-12);  // along the steepest direction
  spec.max_iterations = 20;
  spec.converged = [](const Eigen::VectorXd& step) { return step.norm() < 1e-9; };
  r = levenberg_marquardt(shift, Eigen::Vector2d::Zero(), spec);
  EXPECT_TRUE(r.converged);
  EXPECT_NEAR((r.p - Eigen::Vector2d(3, 4)).norm(), 0.0, 1e-6);
}

}  // namespace
}  // namespace orderband
