// The processes that share one run (the ranks of an MPI launch) as the library sees them: no MPI
// here, only the one collective step the stages need.
#pragma once

#include <cstdint>
#include <cstring>
#include <functional>
#include <utility>
#include <vector>

namespace orderband {

/// One process by default.
struct ProcessShare {
  int rank = 0, processes = 1;
  /// Every process's bytes, in rank order, on every process; all of them call it together (a
  /// collective step). Needed when processes > 1.
  std::function<std::vector<std::vector<uint8_t>>(const std::vector<uint8_t>& mine)> all_gather;
  /// The processes that give the same `crew` number, as a share of their own (their ranks in this
  /// share's order); all processes call it together. Needed when processes > 1.
  std::function<ProcessShare(int crew)> split;

  bool shared() const { return processes > 1; }
  /// Waits until every process has come here (an all_gather of nothing).
  void wait_for_all() const {
    if (shared()) all_gather({});
  }
  /// The crew this process joins (split); itself alone when the share has one process.
  ProcessShare crew(int number) const { return shared() ? split(number) : ProcessShare{}; }
  /// all_gather of numbers.
  std::vector<std::vector<double>> all_gather_numbers(const std::vector<double>& mine) const {
    if (!shared()) return {mine};
    const auto* p = reinterpret_cast<const uint8_t*>(mine.data());
    std::vector<std::vector<double>> out;
    for (const std::vector<uint8_t>& bytes : all_gather(std::vector<uint8_t>(p, p + mine.size() * sizeof(double)))) {
      out.emplace_back(bytes.size() / sizeof(double));
      std::memcpy(out.back().data(), bytes.data(), out.back().size() * sizeof(double));
    }
    return out;
  }
  /// The part of `count` items (in order) this process takes when they are cut into one
  /// contiguous block per process of sizes that differ by at most one: [first, last).
  std::pair<size_t, size_t> block_of(size_t count) const {
    const auto edge = [&](int r) {
      return static_cast<size_t>(static_cast<unsigned long long>(count) * r / processes);
    };
    return {edge(rank), edge(rank + 1)};
  }
};

}  // namespace orderband
