// Levenberg–Marquardt.
#include "orderband/least_squares.hpp"

#include <algorithm>

namespace orderband {
namespace {

/// The damped step: (JᵀJ + λ diag JᵀJ) δ = −Jᵀr, shortened to the spec's limit.
Eigen::VectorXd damped_step(const Eigen::MatrixXd& jtj, const Eigen::VectorXd& jtr, double lambda,
                            const LevenbergMarquardtSpec& spec) {
  Eigen::MatrixXd a = jtj;
  for (Eigen::Index k = 0; k < a.rows(); ++k) a(k, k) *= 1 + lambda;
  Eigen::VectorXd step = a.ldlt().solve(-jtr);
  if (const double length = step.norm(); spec.max_step > 0 && length > spec.max_step) step *= spec.max_step / length;
  return step;
}

}  // namespace

LeastSquaresResult levenberg_marquardt(LeastSquaresProblem& problem, const Eigen::VectorXd& start,
                                       const LevenbergMarquardtSpec& spec) {
  LeastSquaresResult r;
  r.p = start;
  r.cost = r.cost_start = problem.cost(start);
  problem.accept(start);
  double lambda = spec.damping;
  Eigen::MatrixXd jtj;
  Eigen::VectorXd jtr;
  for (int it = 0; it < spec.max_iterations && !r.converged; ++it) {
    r.iterations = it + 1;
    problem.normal_equations(r.p, jtj, jtr);
    bool accepted = false;
    for (int attempt = 0; attempt < spec.max_attempts && !accepted; ++attempt) {
      const Eigen::VectorXd step = damped_step(jtj, jtr, lambda, spec);
      if (!step.allFinite()) return r;
      const Eigen::VectorXd trial = r.p + step;
      const double c = problem.cost(trial);
      if (c < r.cost) {
        problem.accept(trial);
        r.p = trial, r.cost = c;
        lambda = std::max(lambda / spec.damping_down, spec.min_damping);
        accepted = true;
        r.converged = spec.converged && spec.converged(step);
      } else if (spec.converged && spec.converged(step)) {
        r.converged = true;  // a step this small that does not lower the cost: at the minimum
        return r;
      } else {
        lambda *= spec.damping_up;
      }
    }
    if (!accepted) break;
  }
  return r;
}

}  // namespace orderband
