// Fuzz target: the orientation table (CSV) of a 4 × 5 scan.
#include <sstream>

#include "fuzz_support.hpp"
#include "orderband/orientation_csv.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  orderband::ScanGrid grid;
  grid.rows = 4, grid.cols = 5, grid.step_um = 0.05;
  return orderband::fuzz::expect_result_or_error([&] {
    std::istringstream is(orderband::fuzz::as_text(data, size));
    orderband::read_orientation_csv(is, grid, "fuzz.csv");
  });
}
