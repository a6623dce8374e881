// The kinematic band model: pattern intensity on the sphere from plane families and structure factors.
#pragma once

#include <Eigen/Core>
#include <cmath>
#include <vector>

#include "orderband/frames.hpp"
#include "orderband/phase.hpp"

namespace orderband {

/// Parameters of the declared kinematic band model (a model, not a dynamical
/// simulation). Every family {hkl} with d ≥ d_min_A gives, for each of its
/// planes with unit normal n, a band of half-width θ_B around the great
/// circle n·x = 0:
///   I(x) = 1 + Σ_planes w_hkl · p(α / θ_B),  α = asin(n·x),
///   w_hkl = band_amplitude · (|F_hkl| / |F_max|)^band_exponent,
///   p(u) = s(u) + edge_contrast · exp(−(|u| − 1)² / (2 e²)),
///   s(u) = ½ [1 + tanh((1 − |u|) / e)],  e = edge_width (in units of θ_B),
/// where F_max is the phase's strongest family, so the strongest band of
/// every phase has the same contrast. With band_exponent = 2 the weights are
/// the kinematic intensities |F|² (textbook kinematic theory).
/// Band profile shapes. The model itself uses `soft`; the others are renderer variants of the
/// mismatch suite (synth.hpp) that the estimator is never told about.
enum class BandShape {
  soft,      ///< s(u) = ½ [1 + tanh((1 − |u|) / e)]
  flat,      ///< s(u) = 1 for |u| < 1, 0 outside: sharp edges
  gaussian,  ///< s(u) = exp(−u² / (2 · 0.8²)): the same integral as a flat band, no edges
};

struct BandModelParams {
  double band_amplitude = 0.12;  ///< weight of the strongest band (fraction of background)
  double band_exponent = 2.0;    ///< w ∝ |F|^exponent
  double edge_contrast = 0.25;   ///< bright edge lines, relative to the band's own weight
  double edge_width = 0.12;      ///< edge softness e, in units of θ_B
  double d_min_A = 0.8;          ///< families with d below this are left out
  BandShape shape = BandShape::soft;
  /// Edge line on the side n·x > 0 of a plane scaled by (1 + a), on the other by (1 − a): a
  /// renderer variant (real excess/deficiency lines differ between the two edges). 0: symmetric.
  double edge_asymmetry = 0;
};

/// One plane of the model: unit normal (crystal frame), half-width, weight.
struct ModelBand {
  Eigen::Vector3d normal;
  double theta_b = 0;  ///< radians
  double weight = 0;
  int family = 0;  ///< index into families()
};

struct ModelFamily {
  Eigen::Vector3i hkl;
  double d_A = 0, theta_b = 0, f_abs_A = 0, weight = 0;
  double edge_contrast = 0;  ///< the params' value unless adjusted
  int table = 0;             ///< which profile table the family's bands use
};

/// The parameters for `phase` when its bands must be the families of `reference` (the two phases
/// of an ordering pair, whose cells differ by a misfit): d_min scaled by the cube root of the cells'
/// volume ratio, so that a family whose d lies near the cut-off is kept or left out in both phases
/// alike. With d_min 0.8 Å the Ni pair's {420} lies at 0.8016 Å in γ and 0.7987 Å in γ′: left to
/// each phase's own cut-off, γ would carry a band γ′ lacks, a phase difference of the model's
/// making that outweighs the superlattice bands.
BandModelParams with_families_of(const BandModelParams& params, const Phase& phase, const Phase& reference);

class KinematicBandModel {
 public:
  KinematicBandModel(const Phase& phase, double kilovolts, const BandModelParams& params);

  /// Relative intensity I(x) at a crystal-frame direction (1 = background).
  double intensity(const CrystalDirection& x) const { return intensity(x.vec()); }
  double intensity(const Eigen::Vector3d& crystal_unit) const;

  const std::vector<ModelBand>& bands() const { return bands_; }
  const std::vector<ModelFamily>& families() const { return families_; }
  const BandModelParams& params() const { return params_; }
  /// Profile p(u) of the model at u = α / θ_B (signed: the edge lines may be asymmetric).
  double profile(double u) const { return profile(u, params_.edge_contrast); }
  double profile(double u, double edge_contrast) const;
  /// The same from a table (linear interpolation, relative error < 1e-5), for rendering;
  /// `table` is a family's ModelFamily::table (0: the params' profile).
  double profile_table(double u, int table = 0) const {
    const std::vector<double>& tab = tables_[table];
    const double x = (u + reach_) * table_scale_;
    if (!(x >= 0)) return 0.0;
    const size_t k = static_cast<size_t>(x);
    if (k + 1 >= tab.size()) return 0.0;
    const double t = x - static_cast<double>(k);
    return tab[k] + t * (tab[k + 1] - tab[k]);
  }
  /// |u| beyond which the profile is below 1e-5 of the band weight.
  double profile_reach() const { return reach_; }

  /// Renderer variants: scales one family's weight and gives it an edge contrast of its own.
  void adjust_family(size_t family, double weight_factor, double edge_contrast);

 private:
  BandModelParams params_;
  std::vector<ModelFamily> families_;
  std::vector<ModelBand> bands_;
  std::vector<double> sin_reach_;            ///< per band: sin of the largest |α| with a non-negligible profile
  std::vector<std::vector<double>> tables_;  ///< profiles at u = −reach + k / table_scale_
  double table_scale_ = 1, reach_ = 1;
  void build_tables();
};

}  // namespace orderband
