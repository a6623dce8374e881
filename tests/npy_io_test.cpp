// .npy maps: written and read back, checked against numpy, and damaged files refused.
#include "orderband/npy_io.hpp"

#include <gtest/gtest.h>

#include <cstring>
#include <filesystem>
#include <fstream>

#include "orderband/error.hpp"
#include "test_support.hpp"

using namespace orderband;
using namespace orderband::test;

namespace {

std::string npy_error_of(const std::string& path) {
  try {
    read_npy(path);
  } catch (const Error& e) {
    return e.what();
  }
  return "no error";
}

/// A version-1 .npy file with `header` (padded) followed by `data_bytes` zero bytes.
void write_raw_npy(const std::string& path, const std::string& header, size_t data_bytes, uint8_t major = 1) {
  std::ofstream out(path, std::ios::binary);
  const unsigned char magic[8] = {0x93, 'N', 'U', 'M', 'P', 'Y', major, 0};
  out.write(reinterpret_cast<const char*>(magic), 8);
  const uint16_t len = static_cast<uint16_t>(header.size());
  out.write(reinterpret_cast<const char*>(&len), 2);
  out << header << std::string(data_bytes, '\0');
}

}  // namespace

TEST(NpyIo, RoundTripReadByNumpy) {
  const std::string dir = make_temp_dir("npy");
  const std::vector<float> v = {0.5f, -1.25f, 3.0f, 7.5f, 1e-3f, 42.0f};
  write_npy_float32(dir + "/a.npy", 2, 3, v);
  const NpyArray a = read_npy(dir + "/a.npy");
  ASSERT_EQ(a.shape, (std::vector<size_t>{2, 3}));
  EXPECT_EQ(a.values, v);
  // numpy (outside the project) reads the same shape and values.
  const RunResult py = run_reference_script("npy_reference.py", dir + "/a.npy");
  ASSERT_EQ(py.exit_code, 0) << py.err;
  EXPECT_EQ(py.out, "(2, 3) float32 51.7510\n");
  std::filesystem::remove_all(dir);
}

TEST(NpyIo, DamagedFilesAreRefusedBeforeAnythingLarge) {
  const std::string dir = make_temp_dir("npy-bad");
  // Found by the .npy fuzz target: a version byte other than 1 made the reader take the next four
  // bytes as the header length (650 MB) and allocate it.
  {
    std::ofstream out(dir + "/version.npy", std::ios::binary);
    const unsigned char bytes[12] = {0x93, 'N', 'U', 'M', 'P', 'Y', 0x76, 0, 0x01, 0x7b, 0x00, 0x27};
    out.write(reinterpret_cast<const char*>(bytes), 12);
  }
  EXPECT_NE(npy_error_of(dir + "/version.npy").find("format version 118 is not 1, 2 or 3"), std::string::npos);
  // A shape whose data the file does not hold is refused before it is allocated.
  write_raw_npy(dir + "/huge.npy", "{'descr': '<f4', 'fortran_order': False, 'shape': (4000000000, 4000000000), }\n",
                16);
  EXPECT_NE(npy_error_of(dir + "/huge.npy").find("its shape needs more data than the file holds"), std::string::npos);
  write_raw_npy(dir + "/long.npy", "{'descr': '<f4', 'fortran_order': False, 'shape': (2, 3), }\n", 28);
  EXPECT_NE(npy_error_of(dir + "/long.npy").find("needs 24 bytes of data, the file holds 28"), std::string::npos);
  write_raw_npy(dir + "/short.npy", "{'descr': '<i4', 'fortran_order': False, 'shape': (2, 3), }\n", 20);
  EXPECT_NE(npy_error_of(dir + "/short.npy").find("needs 24 bytes of data, the file holds 20"), std::string::npos);
  write_raw_npy(dir + "/digits.npy",
                "{'descr': '<f4', 'fortran_order': False, 'shape': (99999999999999999999999, 1), }\n", 4);
  EXPECT_NE(npy_error_of(dir + "/digits.npy").find("is too large"), std::string::npos);
  write_raw_npy(dir + "/dtype.npy", "{'descr': '<u2', 'fortran_order': False, 'shape': (2,), }\n", 4);
  EXPECT_NE(npy_error_of(dir + "/dtype.npy").find("unsupported dtype <u2"), std::string::npos);
  std::filesystem::remove_all(dir);
}
