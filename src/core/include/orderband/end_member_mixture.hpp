// The end members of a scan's per-point ordered signal: two Gaussians (the pure phases) and the
// points that mix both phases under the beam, fitted by EM.
#pragma once

#include <array>
#include <vector>

namespace orderband {

struct EndMember {
  double mean = 0, sd = 0;  ///< of the raw ordered signal (model units: 0 disordered, 1 ordered)
  double weight = 0;        ///< mixture weight (share of points)
};

/// How the points that mix both phases under the beam enter the mixture.
enum class MixedPoints {
  /// Their signal lies evenly between the two means and carries the same noise: the uniform density
  /// on [m₀, m₁] convolved with a Gaussian of the end members' smaller spread; stray values are a
  /// separate uniform share over the central 99 % of the values, which also bounds the means. The
  /// end members come out unbiased (tests/end_member_mixture_test.cpp); use it where the means are
  /// the result.
  between_means,
  /// One uniform share over the central 99 % of the values for mixed and stray points alike. Its
  /// means are pulled toward the middle by mixed points (by −0.02 on an ordered mean of 0.93 with 10 %
  /// mixed points), but it holds on rough first guesses with far strays, where the span of the
  /// mixed points, following a mean, can run off to a stray value: use it to split, not to measure.
  broad,
};

struct EndMemberMixture {
  std::array<EndMember, 2> end_members;  ///< component 0 has the lower mean
  MixedPoints model = MixedPoints::between_means;
  double mixed = 0, stray = 0;  ///< shares (broad: all in `mixed`)
  double central_lo = 0, central_hi = 1;
  /// The mixture's density at x.
  double density(double x) const;
};

/// The mixture of `values` by EM, started from the model's end members 0 and 1 (the values are in
/// those units). Fewer than 4 values: the start, with weights 0.
EndMemberMixture end_member_mixture(const std::vector<double>& values, MixedPoints model = MixedPoints::between_means);

/// The end members alone (end_member_mixture).
std::array<EndMember, 2> two_component_mixture(const std::vector<double>& values,
                                               MixedPoints model = MixedPoints::between_means);

}  // namespace orderband
