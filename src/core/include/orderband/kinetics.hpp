// Coarsening kinetics: ⟨r⟩ⁿ − ⟨r0⟩ⁿ = k t per temperature, and the Arrhenius law of k.
#pragma once

#include <vector>

namespace orderband {

struct CoarseningFit {
  double exponent = 3;                         ///< n (fixed, or fitted when free)
  double exponent_low = 0, exponent_high = 0;  ///< 95 % interval of n when fitted (NaN if not estimable)
  double k = 0;                                ///< rate constant, µmⁿ/h
  double k_low = 0, k_high = 0;  ///< 95 % confidence interval of k (t-based; NaN with fewer than 3 points)
  double r0_pow_n = 0;           ///< ⟨r0⟩ⁿ (µmⁿ)
  double residual_sd = 0;
  int points = 0;
};

/// Least squares of rⁿ = r0ⁿ + k t for a fixed n: a straight line in t, weighted by 1/r^(2n)
/// (mean radii scatter by a similar relative amount at every time); the CI of the slope uses
/// Student's t with m − 2 degrees of freedom.
CoarseningFit fit_coarsening(const std::vector<double>& time_h, const std::vector<double>& radius_um, double n);

/// n free: the relative SSE of the radii, (r − model)/r, is minimised over n ∈ [1, 6]; the
/// 95 % interval of n is where SSE(n) ≤ SSE_min · (1 + F_{0.95; 1, m−3} / (m − 3)) (profile
/// likelihood; needs at least 4 points).
CoarseningFit fit_coarsening_free(const std::vector<double>& time_h, const std::vector<double>& radius_um);

struct ArrheniusFit {
  double activation_kj_mol = 0;  ///< Q
  double q_low = 0, q_high = 0;  ///< 95 % CI (needs ≥ 3 temperatures)
  double ln_k0 = 0;
  int points = 0;
};

/// ln k = ln k0 − Q / (R T), T in kelvin from °C; R = 8.314462618 J/(mol K) (CODATA 2018).
ArrheniusFit fit_arrhenius(const std::vector<double>& temperature_c, const std::vector<double>& k);

}  // namespace orderband
