// Pattern sources: the sample types and the fault bookkeeping every source shares.
#include "orderband/pattern_source.hpp"

#include <cmath>
#include <cstring>

#include "orderband/error.hpp"

namespace orderband {

SampleType parse_sample_type(const std::string& name) {
  if (const auto t = enum_from_name<SampleType>(name)) return *t;
  fail("unknown sample type '", name, "' (use ", enum_name_list<SampleType>(), ")");
}

const char* sample_type_name(SampleType t) { return name_of(t).data(); }

std::map<size_t, std::string> PatternSource::faults() const {
  std::lock_guard<std::mutex> lock(faults_mutex_);
  return faults_;
}

void PatternSource::mark_faulty(size_t index, const std::string& reason, float* pattern) {
  std::fill(pattern, pattern + pixels(), std::nanf(""));
  std::lock_guard<std::mutex> lock(faults_mutex_);
  faults_.emplace(index, reason);
}

void PatternSource::mark_non_finite(float* out, size_t n, size_t first, const ScanGrid& grid) {
  for (size_t k = 0; k < n; ++k) {
    float* pattern = out + k * pixels();
    for (size_t q = 0; q < pixels(); ++q)
      if (!std::isfinite(pattern[q])) {
        const GridPoint p = grid.point(first + k);
        mark_faulty(first + k,
                    "pattern at row " + std::to_string(p.row) + ", col " + std::to_string(p.col) +
                        " has a NaN or infinite pixel (" + std::to_string(q) + ")",
                    pattern);
        break;
      }
  }
}

}  // namespace orderband
