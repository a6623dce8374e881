// Coarsening kinetics: ⟨r⟩ⁿ − ⟨r0⟩ⁿ = k t per temperature, and the Arrhenius law of k.
#pragma once

#include <vector>

namespace orderband {

struct CoarseningFit {
  double exponent = 3;                         ///< n (fixed, or fitted when free)
  double exponent_low = 0, exponent_high = 0;  ///< 95 % interval of n when fitted (NaN if not estimable)
  double k = 0;                                ///< rate constant, µmⁿ/h
  double k_low = 0, k_high = 0;                ///< 95 % confidence interval of k (NaN where neither basis below exists)
  /// The interval's basis: true, the radii's own errors carried through (widened by the Birge ratio
  /// where the trials scatter more than those errors say); false, the scatter about the line alone.
  bool k_interval_from_radius_errors = false;
  double r0_pow_n = 0;  ///< ⟨r0⟩ⁿ (µmⁿ)
  double residual_sd = 0;
  int points = 0;
};

/// Least squares of rⁿ = r0ⁿ + k t for a fixed n: a straight line in t, weighted by 1/σ² of rⁿ,
/// from `radius_se_um` (each radius's standard error) where given, else by 1/r^(2n) (mean radii
/// scatter by a similar relative amount at every time). The 95 % interval of k: with errors given,
/// theirs carried through (normal quantile), times the Birge ratio √(χ²/(m − 2)) where that exceeds
/// 1; without, the scatter about the line (Student's t, m − 2 degrees of freedom; needs 3 points).
CoarseningFit fit_coarsening(const std::vector<double>& time_h, const std::vector<double>& radius_um, double n,
                             const std::vector<double>& radius_se_um = {});

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
