// Pattern sources: the sample types and the fault bookkeeping every source shares.
#include "orderband/pattern_source.hpp"

#include <cmath>
#include <cstring>

#include "orderband/error.hpp"

namespace orderband {

SampleType parse_sample_type(const std::string& name) {
  if (name == "uint8") return SampleType::uint8;
  if (name == "uint16") return SampleType::uint16;
  if (name == "float32") return SampleType::float32;
  fail("unknown sample type '", name, "' (use uint8, uint16 or float32)");
}

const char* sample_type_name(SampleType t) {
  switch (t) {
    case SampleType::uint8:
      return "uint8";
    case SampleType::uint16:
      return "uint16";
    case SampleType::float32:
      return "float32";
  }
  return "?";
}

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
