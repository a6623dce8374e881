// Particle size distributions: log-normal and the Lifshitz–Slyozov–Wagner (LSW) law.
#pragma once

#include <random>
#include <vector>

namespace orderband {

/// LSW scaled radius distribution (Lifshitz & Slyozov, J. Phys. Chem. Solids
/// 19 (1961) 35; Wagner, Z. Elektrochem. 65 (1961) 581; citations from memory),
/// u = r/⟨r⟩ ∈ [0, 1.5):
///   h(u) = (4/9) u² (3/(3+u))^{7/3} (1.5/(1.5−u))^{11/3} exp(−u/(1.5−u)),
/// normalised to 1 with mean 1.
double lsw_density(double u);

/// A diameter distribution (µm).
class SizeDistribution {
 public:
  /// Log-normal: ln D ~ N(ln median, sigma_ln²).
  static SizeDistribution lognormal(double median_um, double sigma_ln);
  /// LSW: D = mean_um · u with u ~ h(u).
  static SizeDistribution lsw(double mean_um);
  /// A single size.
  static SizeDistribution fixed(double diameter_um);

  double sample(std::mt19937_64& rng) const;
  /// Quantile (inverse CDF) at p ∈ (0, 1).
  double quantile(double p) const;
  double mean_um() const;
  /// ⟨D³⟩ (µm³), for volume fractions.
  double mean_cube_um3() const { return mean_power(3); }
  /// ⟨D^k⟩ (µm^k).
  double mean_power(int k) const;
  /// Largest size drawn (the 1 − 1e-6 quantile; LSW: 1.5 × mean).
  double max_um() const;
  /// Probability density of D (per µm).
  double density(double d_um) const;

 private:
  enum class Kind { lognormal, lsw, fixed } kind_ = Kind::fixed;
  double a_ = 0, b_ = 0;  // lognormal: median, sigma; lsw: mean; fixed: diameter
};

}  // namespace orderband
