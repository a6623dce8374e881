// Atomic output: a finished file appears whole or not at all; a failed write says why.
#include "orderband/atomic_file.hpp"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>

#include "orderband/error.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

TEST(AtomicFile, AFullDiskIsNamedAndNothingIsLeftBehind) {
  // /dev/full fails every write with ENOSPC, as a full disk does; the buffered bytes fail only
  // when flushed, so the check must come after the close.
  ASSERT_TRUE(std::filesystem::exists("/dev/full"));
  std::ofstream out("/dev/full", std::ios::binary);
  ASSERT_TRUE(out);
  out << std::string(100, 'x');  // stays in the stream's buffer
  try {
    finish_writing(out, "summary.json");
    ADD_FAILURE() << "a write to a full device passed";
  } catch (const Error& e) {
    EXPECT_NE(std::string(e.what()).find("No space left on device"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("summary.json"), std::string::npos) << e.what();
  }
}

TEST(AtomicFile, AFailedWriteLeavesTheTargetAsItWasAndNoTemporaryFile) {
  const std::string dir = test::make_temp_dir("atomic");
  const std::string target = dir + "/out.txt";
  write_text_atomically(target, "first");
  EXPECT_THROW(write_atomically(target,
                                [](const std::string& temp) {
                                  std::ofstream(temp) << "half";
                                  fail("stopped half way");
                                }),
               Error);
  std::stringstream read;
  read << std::ifstream(target).rdbuf();
  EXPECT_EQ(read.str(), "first");
  size_t files = 0;
  for (const auto& entry : std::filesystem::directory_iterator(dir)) files += entry.is_regular_file();
  EXPECT_EQ(files, 1u);
  std::filesystem::remove_all(dir);
}

}  // namespace
}  // namespace orderband
