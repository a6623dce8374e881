// The one nonlinear least-squares optimiser: Levenberg–Marquardt over a problem that supplies its
// cost and normal equations (orientation refinement, the pattern-centre fit, grain orientations).
#pragma once

#include <functional>

#include <Eigen/Dense>

namespace orderband {

/// A problem for levenberg_marquardt. Parameters p are the problem's own (often a local
/// parametrisation around a start: a rotation vector applied before a start orientation). The
/// optimiser asks for the cost at trial points and, after accepting one, for the normal
/// equations there; a problem may keep what cost() computed for them (residuals, derivatives).
class LeastSquaresProblem {
 public:
  virtual ~LeastSquaresProblem() = default;
  virtual int parameters() const = 0;
  /// Σ r² at p.
  virtual double cost(const Eigen::VectorXd& p) = 0;
  /// The trial point p last passed to cost() is now the current point.
  virtual void accept(const Eigen::VectorXd& p) { (void)p; }
  /// JᵀJ and Jᵀr at the current point (J = ∂r/∂p).
  virtual void normal_equations(const Eigen::VectorXd& p, Eigen::MatrixXd& jtj, Eigen::VectorXd& jtr) = 0;
};

struct LevenbergMarquardtSpec {
  int max_iterations = 20;
  double damping = 1e-3;    ///< initial λ; the step solves (JᵀJ + λ diag JᵀJ) δ = −Jᵀr (Marquardt's scaling)
  double damping_down = 3;  ///< λ ÷ this after an accepted step
  double damping_up = 4;    ///< λ × this after a rejected one
  double min_damping = 1e-7;  ///< λ never falls below this
  int max_attempts = 8;       ///< rejected steps in a row before the fit stops
  /// Steps longer than this (Euclidean norm) are shortened to it before they are tried (0: no
  /// limit); for rotation vectors, a trust region in radians.
  double max_step = 0;
  /// A step that satisfies this ends the fit (converged): taken when it lowers the cost, else
  /// not (the misfit is then at its minimum within the step's size).
  std::function<bool(const Eigen::VectorXd& step)> converged;
};

struct LeastSquaresResult {
  Eigen::VectorXd p;
  double cost_start = 0, cost = 0;
  int iterations = 0;      ///< normal equations formed
  bool converged = false;  ///< ended by the spec's convergence test
};

/// Levenberg–Marquardt (Marquardt 1963, the damping adapted as in Nocedal & Wright, Numerical
/// Optimization, ch. 10): each iteration forms the normal equations at the current point and tries
/// damped steps until one lowers the cost (λ shrinks) or max_attempts fail (the fit stops).
LeastSquaresResult levenberg_marquardt(LeastSquaresProblem& problem, const Eigen::VectorXd& start,
                                       const LevenbergMarquardtSpec& spec = {});

}  // namespace orderband
