// Quantiles of the distributions the intervals use (Student t, F), from Boost.Math.
#pragma once

namespace orderband {

/// Student t quantile t_{p, ν} (e.g. p = 0.975 for a two-sided 95 % interval); ν ≥ 1.
double student_t_quantile(double p, int dof);

/// The two-sided 95 % quantile of the standard normal distribution.
inline constexpr double kNormal95 = 1.959963984540054;

/// F-distribution quantile F_{p; d1, d2}; d1, d2 ≥ 1.
double f_quantile(double p, int d1, int d2);

}  // namespace orderband
