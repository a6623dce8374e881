// Fuzz target: the scan description (TOML).
#include "fuzz_support.hpp"
#include "orderband/scan_config.hpp"
#include "orderband/scan_config_toml.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return orderband::fuzz::expect_result_or_error(
      [&] { orderband::parse_scan_config(orderband::fuzz::as_text(data, size), "/tmp/fuzz-scan/scan.toml"); });
}
