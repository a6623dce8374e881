// Band profiles of plane families on a sphere, and the difference ordering makes to them.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "orderband/ordering_pair.hpp"
#include "orderband/sphere.hpp"

namespace orderband {

/// Bins across a band: centres at u = (i + ½) w − max_u in units of the family's Bragg angle
/// (u = asin(n·x) / θ_B; the band edges at |u| = 1).
struct ProfileBinning {
  double width_u = 0.25;
  double max_u = 2.5;
  int bins() const;
  double centre(int bin) const;
};

/// The profile of a band on a sphere (a spherical Radon transform restricted to one family): per
/// bin, the mean of the relative intensity I/⟨I⟩ − 1 along the small circles at the bin centre's
/// offset from each of the family's planes (all symmetry-equivalent normals), sampled half a pixel
/// apart with HEALPix bilinear interpolation; ⟨I⟩ is the sphere's mean over all pixels (the
/// quantity a pattern shows after its mean is divided out). Offsets finer than the sphere's pixels
/// are interpolated, not resolved.
std::vector<double> sphere_band_profile(const SphereMap& sphere, const std::vector<Eigen::Vector3d>& normals,
                                        double bragg_rad, const ProfileBinning& bins = {});

/// One family's band profiles in both phases of a pair and what ordering changes.
struct FamilyProfileContrast {
  std::vector<double> u;                    ///< bin centres (units of the ordered phase's Bragg angle)
  std::vector<double> ordered, disordered;  ///< relative intensity per bin (sphere_band_profile)
  /// Interior (|u| < 0.75) minus flanks (1.25 < |u| < 2) of each phase's profile: the band's
  /// contrast in relative intensity.
  double contrast_ordered = 0, contrast_disordered = 0;
  /// Root mean square of ordered − disordered over the bins with |u| < 2.
  double rms_difference = 0;
};

/// The profiles of every family of `rows` on the ordered and the disordered phase's spheres (both
/// in the crystal frame of the pair's common cell setting), with the ordered phase's Bragg angles.
std::vector<FamilyProfileContrast> family_profile_contrasts(const SphereMap& ordered, const SphereMap& disordered,
                                                            const std::vector<PairFamily>& rows,
                                                            const ProfileBinning& bins = {});

}  // namespace orderband
