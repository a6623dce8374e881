// The installed package: an outside CMake project finds orderband, builds against it and gets the
// same area fraction as the library in this build.
#include <gtest/gtest.h>

#include <cstdlib>
#include <string>

#include "orderband/map_scan.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "test_support.hpp"

using namespace orderband;

namespace {

int run(const std::string& command) { return test::run_command(command).exit_code; }

}  // namespace

TEST(Package, AnOutsideProgramBuiltWithFindPackageMapsAScan) {
  const std::string dir = test::make_temp_dir("package");
  const std::string cmake = ORDERBAND_CMAKE_COMMAND, stage = dir + "/stage", consumer = dir + "/consumer";
  ASSERT_EQ(run(cmake + " --install " ORDERBAND_BUILD_DIR " --prefix " + stage), 0);
  ASSERT_EQ(run(cmake + " -S " ORDERBAND_SOURCE_DIR "/tests/package -B " + consumer +
                " -DCMAKE_BUILD_TYPE=Release -DCMAKE_PREFIX_PATH=" + stage + " -DCMAKE_CXX_COMPILER=" +
                ORDERBAND_CXX_COMPILER + " \"-DCMAKE_CXX_FLAGS=" ORDERBAND_CONSUMER_FLAGS "\"" +
                " \"-DCMAKE_EXE_LINKER_FLAGS=" ORDERBAND_CONSUMER_FLAGS "\""),
            0);
  ASSERT_EQ(run(cmake + " --build " + consumer), 0);

  const std::string scan = test::write_small_scan(dir, 12, 8);
  const std::string printed = test::run_command(consumer + "/area_fraction " + scan).out;
  ASSERT_FALSE(printed.empty());
  const double outside = std::strtod(printed.c_str(), nullptr);
  const double here = map_scan(read_scan_inputs(read_scan_config(scan)), MapOptions{}).ordered_area_fraction();
  EXPECT_NEAR(outside, here, 1e-8);
  EXPECT_GT(here, 0.05);  // a scan with secondary particles, not an empty map
}
