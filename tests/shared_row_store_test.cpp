// Row results shared among processes: blocks of rows, the exchange after a pass, the inner store.
#include "orderband/shared_row_store.hpp"

#include <gtest/gtest.h>

#include <map>
#include <mutex>

#include "local_processes.hpp"
#include "orderband/error.hpp"

namespace orderband {
namespace {

/// An inner store in memory (shared by the "processes", as a folder on a shared file system is).
struct MemoryRowStore final : RowStore {
  std::mutex lock;
  std::map<std::pair<std::string, int>, std::vector<uint8_t>> rows;
  bool load(const std::string& stage, int row, std::vector<uint8_t>& bytes) override {
    const std::lock_guard<std::mutex> hold(lock);
    const auto it = rows.find({stage, row});
    if (it == rows.end()) return false;
    bytes = it->second;
    return true;
  }
  void save(const std::string& stage, int row, const std::vector<uint8_t>& bytes) override {
    const std::lock_guard<std::mutex> hold(lock);
    rows[{stage, row}] = bytes;
  }
};

std::vector<uint8_t> row_bytes(const std::string& stage, int row) {
  std::vector<uint8_t> b(static_cast<size_t>(row % 5 + 1), static_cast<uint8_t>(row));
  b.push_back(static_cast<uint8_t>(stage.size()));
  return b;
}

TEST(SharedRowStore, BlocksCoverEveryRowOnceAndDifferByAtMostOne) {
  for (int processes : {1, 2, 3, 7})
    for (int rows : {1, 5, 10, 97}) {
      int covered = 0;
      size_t next = 0;  // each block starts where the one before ended
      for (int r = 0; r < processes; ++r) {
        ProcessShare share;
        share.rank = r, share.processes = processes;
        const auto [first, last] = share.block_of(static_cast<size_t>(rows));
        const int size = static_cast<int>(last - first);
        EXPECT_EQ(first, next);
        EXPECT_GE(size, rows / processes);
        EXPECT_LE(size, rows / processes + 1);
        covered += size, next = last;
      }
      EXPECT_EQ(covered, rows);
    }
}

TEST(SharedRowStore, EveryProcessLoadsTheRowsTheOthersComputed) {
  // 3 processes, 11 rows, two stages: each computes and saves only its block's rows, shares them
  // after each stage's pass, and can then load every row of the stage with the bytes its owner
  // saved. The inner store holds each row once, saved by its owner; rows found there (an earlier
  // run's) are loaded by every process without being computed.
  MemoryRowStore inner;
  inner.save("b", 4, row_bytes("b", 4));  // left by an interrupted run
  std::vector<int> computed(3, 0), loaded(3, 0);
  test::run_as_processes(3, [&](const ProcessShare& share) {
    SharedRowStore store(&inner, share, 11);
    for (const std::string stage : {"a", "b"}) {
      std::vector<uint8_t> bytes;
      for (int row = 0; row < 11; ++row)
        if (!store.load(stage, row, bytes) && store.computes(row))
          store.save(stage, row, row_bytes(stage, row)), ++computed[static_cast<size_t>(share.rank)];
      store.share_rows(stage);
      for (int row = 0; row < 11; ++row) {
        ASSERT_TRUE(store.load(stage, row, bytes)) << stage << " " << row;
        EXPECT_EQ(bytes, row_bytes(stage, row)) << stage << " " << row;
        ++loaded[static_cast<size_t>(share.rank)];
      }
    }
  });
  EXPECT_EQ(computed, (std::vector<int>{6, 7, 8}));  // blocks 0–2, 3–6, 7–10 in both stages; row 4 of b found
  EXPECT_EQ(loaded, (std::vector<int>{22, 22, 22}));
  EXPECT_EQ(inner.rows.size(), 22u);
  ProcessShare outside;  // rank 2 of 2 processes
  outside.rank = 2, outside.processes = 2;
  EXPECT_THROW(SharedRowStore(&inner, outside, 11), Error);
}

}  // namespace
}  // namespace orderband
