// Point masks from .npy arrays and greyscale images: orientation of rows and columns, shape errors.
#include "orderband/point_mask.hpp"

#include <gtest/gtest.h>

#include <filesystem>

#include "orderband/error.hpp"
#include "orderband/image_io.hpp"
#include "orderband/npy_io.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

TEST(PointMask, NpyAndImageGiveTheSamePointsInScanOrder) {
  const std::string dir = test::make_temp_dir("pointmask");
  ScanGrid grid;
  grid.rows = 3, grid.cols = 5, grid.step_um = 0.1;
  // Marked points: (0, 4), (1, 0), (2, 2) — row-major, so a transposed reading would differ.
  std::vector<float> values(15, 0.0f);
  values[4] = 1.0f, values[5] = 0.5f, values[12] = -2.0f;  // any non-zero value marks the point
  write_npy_float32(dir + "/m.npy", 3, 5, values);
  GrayImage img;
  img.width = 5, img.height = 3, img.bits = 8;
  img.pixels.assign(15, 0);
  img.pixels[4] = 255, img.pixels[5] = 1, img.pixels[12] = 128;
  write_png_gray(dir + "/m.png", img);
  const std::vector<uint8_t> expected{0, 0, 0, 0, 1, 1, 0, 0, 0, 0, 0, 0, 1, 0, 0};
  EXPECT_EQ(read_point_mask(dir + "/m.npy", grid), expected);
  EXPECT_EQ(read_point_mask(dir + "/m.png", grid), expected);
  // The wrong shape is one error naming the file and both shapes.
  ScanGrid other = grid;
  other.rows = 5, other.cols = 3;
  try {
    read_point_mask(dir + "/m.png", other);
    ADD_FAILURE() << "no error";
  } catch (const Error& e) {
    EXPECT_NE(std::string(e.what()).find("m.png' is 5 x 3 pixels; the scan needs 3 x 5"), std::string::npos)
        << e.what();
  }
  EXPECT_THROW(read_point_mask(dir + "/m.npy", other), Error);
  std::filesystem::remove_all(dir);
}

}  // namespace
}  // namespace orderband
