// Quantiles of the distributions the intervals use, from Boost.Math.
#include "orderband/distributions.hpp"

#include <boost/math/distributions/fisher_f.hpp>
#include <boost/math/distributions/students_t.hpp>

#include "orderband/error.hpp"

namespace orderband {

double student_t_quantile(double p, int dof) {
  if (dof < 1) fail("Student t needs at least 1 degree of freedom");
  if (!(p > 0 && p < 1)) fail("Student t quantile: p must be within (0, 1), got ", p);
  return boost::math::quantile(boost::math::students_t_distribution<double>(dof), p);
}

double f_quantile(double p, int d1, int d2) {
  if (d1 < 1 || d2 < 1) fail("F quantile needs at least 1 degree of freedom in each part, got ", d1, ", ", d2);
  if (!(p > 0 && p < 1)) fail("F quantile: p must be within (0, 1), got ", p);
  return boost::math::quantile(boost::math::fisher_f_distribution<double>(d1, d2), p);
}

}  // namespace orderband
