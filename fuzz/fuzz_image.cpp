// Fuzz target: grey images (PNG and TIFF, told apart by their signatures).
#include "fuzz_support.hpp"
#include "orderband/image_io.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  const bool tiff = size >= 2 && ((data[0] == 'I' && data[1] == 'I') || (data[0] == 'M' && data[1] == 'M'));
  const std::string path = orderband::fuzz::as_file(data, size, tiff ? ".tif" : ".png");
  return orderband::fuzz::expect_result_or_error([&] { orderband::read_gray_image(path); });
}
