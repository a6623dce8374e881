// The processes that share one run (the ranks of an MPI launch) as the library sees them: no MPI
// here, only the one collective step the stages need.
#pragma once

#include <cstdint>
#include <functional>
#include <vector>

namespace orderband {

/// One process by default.
struct ProcessShare {
  int rank = 0, processes = 1;
  /// Every process's bytes, in rank order, on every process; all of them call it together (a
  /// collective step). Needed when processes > 1.
  std::function<std::vector<std::vector<uint8_t>>(const std::vector<uint8_t>& mine)> all_gather;

  bool shared() const { return processes > 1; }
  /// Waits until every process has come here (an all_gather of nothing).
  void wait_for_all() const {
    if (shared()) all_gather({});
  }
};

}  // namespace orderband
