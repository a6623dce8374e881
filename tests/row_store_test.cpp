// Resume rows that are damaged or misplaced are not taken; an output folder holds one run at a time.
#include "orderband/row_store.hpp"
#include "orderband/folder_row_store.hpp"
#include "orderband/input_hash.hpp"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>

#include "orderband/error.hpp"
#include "orderband/folder_lock.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

std::vector<uint8_t> row_bytes(int row) {
  ByteWriter w;
  for (int k = 0; k < 16; ++k) w.put<float>(0.25f * k + row);
  return w.bytes;
}

TEST(FolderRowStore, TakesSoundRowsAndRecomputesDamagedOrSwappedOnes) {
  const std::string dir = test::make_temp_dir("rows");
  {
    FolderRowStore store(dir + "/.resume", "key-1");
    for (int row = 0; row < 4; ++row) store.save("fraction", row, row_bytes(row));
  }
  const std::string folder = dir + "/.resume/";
  // Row 1: four bytes overwritten in place; rows 2 and 3: files swapped.
  {
    std::fstream f(folder + "fraction-1.bin", std::ios::in | std::ios::out | std::ios::binary);
    f.seekp(8);
    f.write("\x7f\x7f\x7f\x7f", 4);
  }
  std::filesystem::rename(folder + "fraction-2.bin", folder + "tmp.bin");
  std::filesystem::rename(folder + "fraction-3.bin", folder + "fraction-2.bin");
  std::filesystem::rename(folder + "tmp.bin", folder + "fraction-3.bin");
  FolderRowStore store(dir + "/.resume", "key-1");
  std::vector<uint8_t> bytes;
  ASSERT_TRUE(store.load("fraction", 0, bytes));
  EXPECT_EQ(bytes, row_bytes(0));
  for (int row = 1; row < 4; ++row) EXPECT_FALSE(store.load("fraction", row, bytes)) << "row " << row;
  EXPECT_FALSE(store.load("orient", 0, bytes));  // another stage's name
  EXPECT_EQ(store.rows_found(), 1u);
  EXPECT_EQ(store.rows_damaged(), 3u);
  // A different key clears the folder.
  FolderRowStore other(dir + "/.resume", "key-2");
  EXPECT_FALSE(other.load("fraction", 0, bytes));
  std::filesystem::remove_all(dir);
}

TEST(FolderHash, ChangesWithAnyImagesNameOrBytes) {
  const std::string dir = test::make_temp_dir("hash");
  auto write = [&](const std::string& name, const std::string& text) { std::ofstream(dir + "/" + name) << text; };
  write("p_0.png", "first image"), write("p_1.png", "second image");
  const std::string h0 = folder_hash_fnv1a64(dir);
  EXPECT_EQ(folder_hash_fnv1a64(dir), h0);
  write("p_1.png", "second imagf");  // one byte changed
  const std::string h1 = folder_hash_fnv1a64(dir);
  EXPECT_NE(h1, h0);
  std::filesystem::rename(dir + "/p_1.png", dir + "/p_2.png");  // renamed
  const std::string h2 = folder_hash_fnv1a64(dir);
  EXPECT_NE(h2, h1);
  write("p_3.png", "");  // an empty image added
  EXPECT_NE(folder_hash_fnv1a64(dir), h2);
  std::filesystem::remove_all(dir);
}

TEST(FolderLock, ASecondRunIntoTheSameFolderStopsUntilTheFirstEnds) {
  const std::string dir = test::make_temp_dir("lock");
  {
    const FolderLock first(dir);
    EXPECT_THROW(FolderLock second(dir), Error);
  }
  EXPECT_NO_THROW(FolderLock third(dir));
  std::filesystem::remove_all(dir);
}

}  // namespace
}  // namespace orderband
