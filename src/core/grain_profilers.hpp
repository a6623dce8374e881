// The fraction stage's profilers at each grain's orientation, built on first use and shared by the
// threads (FixedOrientationProfiler: the points of one grain are profiled at the grain's orientation).
#pragma once

#include <map>
#include <memory>
#include <mutex>
#include <vector>

#include "orderband/band_profile.hpp"
#include "orderband/rotation.hpp"
#include "orderband/sphere.hpp"

namespace orderband {

class GrainProfilers {
 public:
  /// `grain_orientation[g]` is grain g's orientation; all arguments must outlive this object. When
  /// the plans held exceed `budget_bytes`, the cache is emptied and refilled as points need them
  /// (a plan in use stays alive until its user is done).
  GrainProfilers(const BandProfiler& profiler, const std::vector<uint8_t>& mask, const DetectorRays& rays,
                 const std::vector<Rotation>& grain_orientation, size_t budget_bytes = size_t{512} << 20);

  /// The profiler at grain g's orientation.
  std::shared_ptr<const FixedOrientationProfiler> at_grain(int g) const;

 private:
  const BandProfiler& profiler_;
  const std::vector<uint8_t>& mask_;
  const DetectorRays& rays_;
  const std::vector<Rotation>& grain_orientation_;
  size_t budget_bytes_;
  mutable std::mutex mutex_;
  mutable std::map<int, std::shared_ptr<const FixedOrientationProfiler>> plans_;
  mutable size_t held_bytes_ = 0;
};

}  // namespace orderband
