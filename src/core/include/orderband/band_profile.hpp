// Band profiles: the spherical Radon transform along small circles at offset α from each family's planes.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

#include "orderband/plane_family.hpp"
#include "orderband/rotation.hpp"
#include "orderband/sphere.hpp"

namespace orderband {

/// A plane family as the profiler sees it: its plane normals (crystal frame) and Bragg angle.
struct ProfileFamily {
  std::string label;
  std::vector<Eigen::Vector3d> normals;
  double theta_b = 0;  ///< radians
};

/// Profile sampling: α from −u_max·θ_B to +u_max·θ_B in bins of bin_u·θ_B
/// (u = α/θ_B), so every family is sampled alike in units of its own band width.
/// Folded, the bins run over |u| from 0 to u_max: the two sides of a band pool into one bin
/// (half the bins, each with twice the pixels). A band's kinematic and dynamical profiles are
/// even in u; what is odd (a tilt's excess on one edge and deficiency on the other) is averaged out.
struct ProfileSpec {
  double u_max = 2.5;
  double bin_u = 0.1;
  bool folded = false;
};

/// One family's profile: per α bin, the solid-angle-weighted sums over every
/// detector pixel whose crystal direction x lies at α = asin(n·x) from one of
/// the family's planes (all symmetric equivalents on the detector add up).
struct FamilyProfile {
  std::vector<double> sum;        ///< Σ w v
  std::vector<double> sum_sq;     ///< Σ w v²
  std::vector<double> weight;     ///< Σ w (solid angle, sr)
  std::vector<double> weight_sq;  ///< Σ w²
  std::vector<int> count;         ///< pixels
  double mean(size_t bin) const { return weight[bin] > 0 ? sum[bin] / weight[bin] : 0.0; }
  void clear();
};

/// Window statistics of one family: weighted mean of the pixel values in the
/// window, its variance (pixel scatter over the effective number of pixels)
/// and the pixel count.
struct WindowStats {
  double sum = 0, weight = 0, mean = 0, variance_of_mean = 0;
  int count = 0;
};

/// Off-peak windows in units of θ_B: the band interior |u| ≤ interior_max
/// (leaving out the edge peaks near |u| = 1) and the flanks
/// flank_min ≤ |u| ≤ flank_max outside the edges. Only whole bins count.
struct WindowSpec {
  double interior_max = 0.6;
  double flank_min = 1.4;
  double flank_max = 2.2;
};

struct FamilyWindows {
  WindowStats interior, flanks;
};

/// One (family, bin) slot's sums over its pixels (FamilyProfile's terms).
struct ProfileSums {
  double sum = 0, sum_sq = 0, weight = 0, weight_sq = 0;
  int count = 0;
};

class BandProfiler;

/// Profiles of many patterns at one orientation (the points of one grain, profiled at the grain's
/// orientation): which pixels fall in which (family, bin) slot is worked out once
/// (BandProfiler::at_orientation), so a pattern costs one pass over its pixels (w·v and w·v²) and
/// one gathered addition per pixel and strip it lies in. Gives the same bins, weights and counts
/// as BandProfiler::profile at that orientation, and the same sums but for the order of addition
/// (about 1e-15 relative).
class FixedOrientationProfiler {
 public:
  void profile(const float* pattern, std::vector<FamilyProfile>& out) const;
  size_t entries() const { return pixel_.size(); }
  size_t bytes() const {
    return pixel_.size() * sizeof(uint32_t) + solid_angle_.size() * sizeof(double) +
           fixed_.size() * sizeof(ProfileSums) + offsets_.size() * sizeof(uint32_t);
  }

 private:
  friend class BandProfiler;
  const BandProfiler* profiler_ = nullptr;
  std::vector<uint32_t> offsets_;  ///< per slot, into pixel_ / weight_ (CSR)
  std::vector<uint32_t> pixel_;
  std::vector<double> solid_angle_;  ///< per detector pixel (sr): its weight in every slot
  std::vector<ProfileSums> fixed_;   ///< the weights and counts, the same for every pattern
};

/// Computes band profiles of many patterns fast: a cube map of the sphere
/// (6 × cells² cells) lists, for each cell, the planes whose profile strip
/// (|α| ≤ u_max·θ_B) may reach it; each pattern then costs one rotation, one
/// cell lookup and the exact α of the few listed planes per detector pixel.
class BandProfiler {
 public:
  BandProfiler(std::vector<ProfileFamily> families, const ProfileSpec& spec, int cells = 192);

  const std::vector<ProfileFamily>& families() const { return families_; }
  const ProfileSpec& spec() const { return spec_; }
  int bins() const { return bins_; }
  /// Centre of bin k in units of θ_B (of |u| when folded).
  double bin_centre_u(int k) const { return (spec_.folded ? 0.0 : -spec_.u_max) + (k + 0.5) * spec_.bin_u; }

  /// Profiles of one pattern (values per detector pixel, mask may be empty)
  /// at orientation g; `out` is resized to one profile per family.
  void profile(const float* pattern, const std::vector<uint8_t>& mask, const DetectorRays& rays, const Rotation& g,
               std::vector<FamilyProfile>& out) const;

  /// The same with every pixel's solid angle multiplied by `pixel_weight` (one per detector pixel;
  /// 0 leaves a pixel out): profiles of two patterns over an equal density of crystal directions
  /// (CommonViewComparison).
  void profile_weighted(const float* pattern, const std::vector<double>& pixel_weight, const DetectorRays& rays,
                        const Rotation& g, std::vector<FamilyProfile>& out) const;

  /// The profiler of many patterns at orientation g (FixedOrientationProfiler); it refers to this
  /// profiler, which must outlive it.
  FixedOrientationProfiler at_orientation(const std::vector<uint8_t>& mask, const DetectorRays& rays,
                                          const Rotation& g) const;

  FamilyWindows windows(const FamilyProfile& p, const WindowSpec& spec = {}) const;

 private:
  friend class FixedOrientationProfiler;
  int cell_of(const Eigen::Vector3d& u) const;
  /// Calls hit(pixel, slot) for every pixel in the mask and every (family, bin) slot whose strip it
  /// lies in at orientation g, pixels in increasing order.
  template <typename Hit>
  void for_each_strip_pixel(const std::vector<uint8_t>& mask, const DetectorRays& rays, const Rotation& g,
                            Hit&& hit) const;
  void copy_out(const std::vector<ProfileSums>& acc, std::vector<FamilyProfile>& out) const;
  std::vector<ProfileFamily> families_;
  ProfileSpec spec_;
  int bins_ = 0, cells_ = 0;
  // Flattened planes.
  std::vector<float> nx_, ny_, nz_, inv_theta_;
  std::vector<int> plane_family_;
  // Cube-map cells → candidate planes (CSR).
  std::vector<uint32_t> offsets_;
  std::vector<uint16_t> candidates_;
};

/// Writes the bin means of every family (families × bins values, family by family) where a bin
/// holds pixels; other entries are left as they are (NaN: not covered). The feature vector of the
/// learned estimator and of the grain comparisons.
template <class T>
void profile_bin_means(const std::vector<FamilyProfile>& prof, size_t bins, T* out) {
  for (size_t f = 0; f < prof.size(); ++f)
    for (size_t b = 0; b < bins; ++b)
      if (prof[f].weight[b] > 0) out[f * bins + b] = static_cast<T>(prof[f].mean(b));
}

/// Families of a phase as ProfileFamily, Bragg angles at a voltage.
std::vector<ProfileFamily> profile_families(const std::vector<PlaneFamily>& families, double wavelength_A);

}  // namespace orderband
