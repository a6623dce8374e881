// Grey images: damaged PNG and TIFF files give one clear error, never a crash or a leak.
#include "orderband/image_io.hpp"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>

#include "orderband/error.hpp"
#include "test_support.hpp"

using namespace orderband;
using namespace orderband::test;

namespace {

std::string error_of(const std::string& path) {
  try {
    read_gray_image(path);
  } catch (const Error& e) {
    return e.what();
  }
  return "no error";
}

void write_bytes(const std::string& path, const std::vector<uint8_t>& bytes) {
  std::ofstream(path, std::ios::binary).write(reinterpret_cast<const char*>(bytes.data()), bytes.size());
}

}  // namespace

TEST(ImageIo, SixteenBitPngRoundTrip) {
  const std::string dir = make_temp_dir("image");
  GrayImage img;
  img.width = 5, img.height = 3, img.bits = 16;
  for (int k = 0; k < 15; ++k) img.pixels.push_back(static_cast<uint16_t>(4000 * k + 7));
  write_png_gray(dir + "/a.png", img);
  const GrayImage back = read_gray_image(dir + "/a.png");
  EXPECT_EQ(back.width, 5);
  EXPECT_EQ(back.height, 3);
  EXPECT_EQ(back.bits, 16);
  EXPECT_EQ(back.pixels, img.pixels);
  std::filesystem::remove_all(dir);
}

TEST(ImageIo, DamagedFilesGiveOneClearError) {
  const std::string dir = make_temp_dir("image-bad");
  // Found by the image fuzz target: an 8 × 8 16-bit PNG whose image data end early. libpng's error
  // handler jumped back over the row buffer, which leaked (a jump must not skip a destructor); the
  // sanitizer run of this test catches the leak.
  write_bytes(dir + "/truncated.png",
              {0x89, 0x50, 0x4e, 0x47, 0xd,  0xa,  0x1a, 0xa,  0x0,  0x0,  0x0,  0xd,  0x49, 0x48, 0x44, 0x52, 0x0,
               0x0,  0x0,  0x8,  0x0,  0x0,  0x0,  0x8,  0x10, 0x0,  0x0,  0x0,  0x0,  0xb1, 0xf4, 0x3d, 0x14, 0x0,
               0x0,  0x0,  0x34, 0x49, 0x44, 0x41, 0x54, 0x78, 0xda, 0x63, 0x64, 0xc2, 0xa,  0xe,  0xa8, 0x66, 0xb0,
               0xc8, 0x3b, 0xb0, 0x38, 0xe0, 0x35, 0x83, 0xf1, 0xd6, 0x1,  0x14, 0xd,  0x2f, 0x0,  0x93, 0x59, 0x34,
               0xe7, 0xda, 0x61, 0xa6, 0x2f, 0x0,  0x0,  0x0,  0x0,  0x49, 0x45, 0x4e, 0x44, 0xae, 0x42, 0x60, 0x82});
  EXPECT_NE(error_of(dir + "/truncated.png").find("is not a readable PNG file"), std::string::npos);
  // A header that declares a 1,000,000-pixel side is refused before anything is allocated (libpng
  // reports the limit set for pattern images as invalid header data).
  write_bytes(dir + "/wide.png", {0x89, 0x50, 0x4e, 0x47, 0xd, 0xa,  0x1a, 0xa,  0x0, 0x0, 0x0, 0xd,
                                  0x49, 0x48, 0x44, 0x52, 0x0, 0xf,  0x42, 0x40, 0x0, 0x0, 0x0, 0x8,
                                  0x8,  0x0,  0x0,  0x0,  0x0, 0x90, 0xb9, 0x99, 0x5c});  // IHDR with its CRC
                                                                                          // (zlib.crc32)
  EXPECT_NE(error_of(dir + "/wide.png").find("Invalid IHDR data"), std::string::npos);
  write_bytes(dir + "/empty.tif", {'I', 'I', 42, 0, 8, 0, 0, 0});
  EXPECT_NE(error_of(dir + "/empty.tif").find("empty.tif"), std::string::npos);
  std::filesystem::remove_all(dir);
}
