// Per-grain fixed-orientation profilers (grain_profilers.hpp).
#include "grain_profilers.hpp"

namespace orderband {

GrainProfilers::GrainProfilers(const BandProfiler& profiler, const std::vector<uint8_t>& mask, const DetectorRays& rays,
                               const std::vector<Rotation>& grain_orientation, size_t budget_bytes)
    : profiler_(profiler),
      mask_(mask),
      rays_(rays),
      grain_orientation_(grain_orientation),
      budget_bytes_(budget_bytes) {}

std::shared_ptr<const FixedOrientationProfiler> GrainProfilers::at_grain(int g) const {
  {
    const std::lock_guard<std::mutex> lock(mutex_);
    if (const auto it = plans_.find(g); it != plans_.end()) return it->second;
  }
  // Built outside the lock (two threads may build the same plan once; both are the same).
  auto plan = std::make_shared<const FixedOrientationProfiler>(
      profiler_.at_orientation(mask_, rays_, grain_orientation_.at(static_cast<size_t>(g))));
  const std::lock_guard<std::mutex> lock(mutex_);
  if (const auto it = plans_.find(g); it != plans_.end()) return it->second;
  if (held_bytes_ + plan->bytes() > budget_bytes_) plans_.clear(), held_bytes_ = 0;
  held_bytes_ += plan->bytes();
  plans_.emplace(g, plan);
  return plan;
}

}  // namespace orderband
