// Several "processes" of a share run as threads of the test, for the library's shared steps
// (ProcessShare): all_gather through a barrier.
#pragma once

#include <barrier>
#include <functional>
#include <thread>
#include <vector>

#include "orderband/process_share.hpp"

namespace orderband::test {

/// Runs body(share) for ranks 0 … processes − 1 at once, each in its own thread with a share whose
/// all_gather collects every thread's bytes.
inline void run_as_processes(int processes, const std::function<void(const ProcessShare&)>& body) {
  std::vector<std::vector<uint8_t>> slots(static_cast<size_t>(processes));
  std::vector<std::vector<std::vector<uint8_t>>> results(static_cast<size_t>(processes));
  std::barrier<> sync(processes);
  std::vector<std::thread> threads;
  for (int r = 0; r < processes; ++r)
    threads.emplace_back([&, r] {
      ProcessShare share;
      share.rank = r, share.processes = processes;
      share.all_gather = [&, r](const std::vector<uint8_t>& mine) {
        slots[static_cast<size_t>(r)] = mine;
        sync.arrive_and_wait();  // every slot filled
        std::vector<std::vector<uint8_t>> all = slots;
        sync.arrive_and_wait();  // every copy taken before a slot is filled again
        return all;
      };
      body(share);
    });
  for (std::thread& t : threads) t.join();
}

}  // namespace orderband::test
