// Fuzz target: the synthetic-scan scenario (TOML).
#include "fuzz_support.hpp"
#include "orderband/synth.hpp"
#include "orderband/synth_scan.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return orderband::fuzz::expect_result_or_error(
      [&] { orderband::parse_synth_scenario(orderband::fuzz::as_text(data, size), "/tmp/fuzz-scenario.toml"); });
}
