// Fuzz target: the heat-treatment trials (TOML).
#include "fuzz_support.hpp"
#include "orderband/trials.hpp"
#include "orderband/trials_toml.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  const std::string path = orderband::fuzz::as_file(data, size, "-trials.toml");
  return orderband::fuzz::expect_result_or_error([&] { orderband::read_trials_config(path); });
}
