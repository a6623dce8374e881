// Indexing detected bands: interplanar-angle voting against the parent phase's strongest families.
#pragma once

#include <optional>
#include <vector>

#include "orderband/band_detect.hpp"
#include "orderband/phase.hpp"
#include "orderband/rotation.hpp"

namespace orderband {

struct IndexingSpec {
  double angle_tolerance_deg = 3.0;     ///< pair angles and band matches
  double min_rel_intensity = 0.1;       ///< reference families: kinematic |F|²/max ≥ this
  double proposal_rel_intensity = 0.2;  ///< families whose plane pairs propose orientations
  int proposal_bands = 7;               ///< pairs among this many strongest detected bands propose
  double d_min_A = 0.9;
  int min_bands_matched = 3;
};

struct IndexingResult {
  Rotation orientation;
  int bands_matched = 0;
  int bands_detected = 0;
  double fit_residual_deg = 0;  ///< mean angle between matched bands and their reference planes
};

/// Every pair of detected bands whose interplanar angle matches a pair of
/// reference planes (within the tolerance) proposes orientations (TRIAD on
/// the two normals, both senses); each proposal is scored by how many of all
/// detected bands it explains (a third band at least, so a proposal is
/// voted for by band triplets), then by the mean angular residual.
class Indexer {
 public:
  Indexer(const Phase& parent, double kilovolts, const IndexingSpec& spec = {});
  /// The best solution, or none if no proposal explains min_bands_matched bands.
  std::optional<IndexingResult> index(const std::vector<DetectedBand>& bands) const;
  /// Up to `count` best distinct solutions (more than 3° apart after symmetry), best first.
  std::vector<IndexingResult> candidates(const std::vector<DetectedBand>& bands, int count) const;
  const std::vector<Eigen::Vector3d>& reference_normals() const { return refs_; }

 private:
  IndexingSpec spec_;
  std::vector<Eigen::Vector3d> refs_;
  struct RefPair {
    int a, b;
    double angle;  ///< radians, in [0, π/2]
  };
  std::vector<RefPair> pairs_;  ///< sorted by angle
  CrystalSymmetry symmetry_;
};

}  // namespace orderband
