// 3-D sphere sizes from the sections a plane cuts through them, sections below a detection limit unseen.
#pragma once

#include <string>
#include <vector>

#include "orderband/size_distribution.hpp"

namespace orderband {

/// The family of sphere-diameter distributions fitted to the sections.
enum class SphereSizeModel {
  lognormal,  ///< ln D ~ N(μ, σ²): parameters median (µm) and σ
  lsw,        ///< Lifshitz–Slyozov–Wagner, D = mean · u, u ~ h(u) (size_distribution.hpp): parameter mean (µm)
};
const char* to_string(SphereSizeModel m);

/// A sphere-diameter distribution of one of the families: the parameters as fitted and the
/// distribution they name (size_distribution.hpp).
struct SphereSizes {
  SphereSizeModel model = SphereSizeModel::lognormal;
  std::vector<double> params;  ///< lognormal: {median_um, sigma_ln}; lsw: {mean_um}
  SizeDistribution distribution;
  static SphereSizes of(SphereSizeModel model, std::vector<double> params);
  double density(double d_um) const { return distribution.density(d_um); }
  double mean_um() const { return distribution.mean_um(); }
  double mean_square_um2() const { return distribution.mean_power(2); }
  /// Diameters outside [lowest, highest] carry less than 1e-10 of the distribution.
  double lowest_um() const;
  double highest_um() const;
};

/// Wicksell's transform (Wicksell, Biometrika 17 (1925) 84; Underwood, Quantitative Stereology,
/// 1970; from memory): the density of section diameters d that a random plane cuts through spheres of
/// diameter density g, f(d) = (d / ⟨D⟩) ∫_d^∞ g(D) / √(D² − d²) dD (per µm).
double section_density(const SphereSizes& spheres, double d_um);
/// The share of sections larger than `limit_um`: (1/⟨D⟩) ∫_limit^∞ g(D) √(D² − limit²) dD.
double section_share_above(const SphereSizes& spheres, double limit_um);

/// Sections of one class as a map saw them: diameters at or above the detection limit, the area
/// they were counted on (guard frame: sections cut by the map border left out of both).
struct SectionSample {
  std::vector<double> diameter_um;
  double limit_um = 0;
  double area_um2 = 0;
  /// Spread of an error common to every measured diameter (µm): where a section's edge falls
  /// between two grid points is not seen, so the measured diameters share a shift within about
  /// ± half a step (uniform: step/√12; common practice, no source). Added to the intervals.
  double common_error_sd_um = 0;
};

/// A sphere-size distribution fitted to sections by maximum likelihood, the truncation at the
/// detection limit taken into account: ℓ = Σ ln f(dᵢ) − n ln S(limit). 95 % intervals by the
/// observed information (Wald, on the logarithms of the parameters, the delta method for the
/// mean), widened by the sample's common diameter error (relative to the mean, in quadrature);
/// the number density N_V = N_A / (⟨D⟩ S(limit)) with the count's Poisson error added.
struct SphereSizeFit {
  SphereSizeModel model = SphereSizeModel::lognormal;
  bool determined = false;  ///< false: the sections cannot fix the distribution (see `reason`)
  std::string reason;
  int sections = 0;
  SphereSizes spheres;
  double log_likelihood = 0;
  double mean_diameter_um = 0, mean_low_um = 0, mean_high_um = 0;
  double number_density_per_um3 = 0, density_low_per_um3 = 0, density_high_per_um3 = 0;
  /// The mean diameter of all sections, resolved or not: (π/4) ⟨D²⟩ / ⟨D⟩, with its interval.
  double mean_section_um = 0, mean_section_low_um = 0, mean_section_high_um = 0;
  double seen_share = 0;  ///< S(limit): the share of all sections the map resolves
  /// Akaike's information criterion, 2k − 2ℓ (k free parameters): the lower, the better supported.
  double aic() const { return 2.0 * spheres.params.size() - 2 * log_likelihood; }
};

/// The standard error of a value from a 95 % interval symmetric in its logarithm, as
/// fit_sphere_sizes writes them (low = v e^(−z se), high = v e^(z se), se relative): v · ln(high /
/// low) / (2 z), in the value's unit; NaN without an interval (low ≤ 0 or high ≤ low).
double standard_error_from_log_interval(double value, double low, double high);

/// Needs at least `min_sections` sections (fewer: not determined, nothing fitted). Not determined
/// either when the maximum lies at the edge of the parameters' range: a log-normal σ at 0.02 or 1.5,
/// an LSW mean pinned by the largest section (the LSW shape ends at 1.5 × the mean, so a population
/// it does not describe drives the mean onto that end).
SphereSizeFit fit_sphere_sizes(const SectionSample& sample, SphereSizeModel model, int min_sections = 10);

}  // namespace orderband
