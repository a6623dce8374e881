// Fuzz target: a phase from a CIF.
#include "fuzz_support.hpp"
#include "orderband/phase.hpp"
#include "orderband/phase_cif.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  return orderband::fuzz::expect_result_or_error(
      [&] { orderband::parse_phase_cif(orderband::fuzz::as_text(data, size), "fuzz.cif"); });
}
