// The installed package: an outside CMake project finds orderband, builds against it and gets the
// same area fraction as the library in this build.
#include <gtest/gtest.h>

#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <string>

#include "orderband/map_scan.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/synth_scan.hpp"
#include "test_support.hpp"

using namespace orderband;

namespace {

int run(const std::string& command) { return std::system((command + " > /dev/null 2>&1").c_str()); }

std::string output_of(const std::string& command) {
  std::string out;
  if (FILE* p = popen(command.c_str(), "r")) {
    char buf[256];
    while (std::fgets(buf, sizeof buf, p)) out += buf;
    pclose(p);
  }
  return out;
}

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

  std::ofstream(dir + "/s.toml") << "[scenario]\nseed = 8\n[scan]\nrows = 12\ncols = 12\nstep_um = 0.03\n"
                                    "[detector]\nwidth_px = 48\nheight_px = 48\npc_px = [24.0, 15.0]\n"
                                    "distance_px = 36.0\n[patterns]\ncounts_per_px = 5000\n[grains]\ncount = 2\n"
                                    "[secondary]\narea_fraction = 0.3\ndistribution = \"lognormal\"\n"
                                    "median_diameter_um = 0.12\nsigma_ln = 0.2\n";
  write_synthetic_scan(read_synth_scenario(dir + "/s.toml"), dir + "/scan", "test");
  const std::string printed = output_of(consumer + "/area_fraction " + dir + "/scan/scan.toml");
  ASSERT_FALSE(printed.empty());
  const double outside = std::strtod(printed.c_str(), nullptr);
  const double here =
      map_scan(read_scan_inputs(read_scan_config(dir + "/scan/scan.toml")), MapOptions{}).ordered_area_fraction();
  EXPECT_NEAR(outside, here, 1e-8);
  EXPECT_GT(here, 0.05);  // a scan with secondary particles, not an empty map
}
