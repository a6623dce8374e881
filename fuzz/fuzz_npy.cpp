// Fuzz target: .npy maps.
#include "fuzz_support.hpp"
#include "orderband/npy_io.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  const std::string path = orderband::fuzz::as_file(data, size, ".npy");
  return orderband::fuzz::expect_result_or_error([&] { orderband::read_npy(path); });
}
