// Evidence for spatial structure in a per-point score: precipitates span several points of a map,
// the noise of one pattern does not reach its neighbour.
#pragma once

#include <cstddef>
#include <cstdint>
#include <vector>

namespace orderband {

/// What the test sees: per point (row by row, `cols` to a row) its value, its region (grain; 0:
/// left out) and, optionally, its fold (pairs are formed only between points of one fold, so that a
/// score whose direction was learned on the other fold is tested on noise that did not shape it).
struct SpatialEvidenceInputs {
  int cols = 0;
  std::vector<double> value;  ///< per point; NaN: left out
  std::vector<int> region;    ///< per point, 1..regions; 0: left out
  std::vector<uint8_t> fold;  ///< per point; empty: one fold
  int regions = 0;
};

struct SpatialEvidence {
  /// Per region (index 1..regions) and pooled: z = Σ eₐe_b / √(Σ eₐ²e_b²) over the pairs of
  /// points at most two steps apart (offsets (0,1), (1,0), (1,±1), (0,2), (2,0)) in one region
  /// (and fold), e the values with the region's plane a + b·row + c·col removed (a smooth drift
  /// across the map, such as a pattern centre that moves with the beam, is not structure) and
  /// clipped at 3 robust standard deviations. With independent noise and no structure z is close
  /// to a standard normal variable (each product has mean 0 and the products of distinct pairs are
  /// uncorrelated); patches of several points make it grow with √pairs. 0 where a region has fewer
  /// than 10 pairs.
  std::vector<double> z;
  double pooled = 0;
  std::vector<size_t> pairs;  ///< per region
};

SpatialEvidence spatial_evidence(const SpatialEvidenceInputs& in);

}  // namespace orderband
