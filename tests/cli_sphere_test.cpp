// `orderband sphere` end to end: outputs, provenance, the cache and its key, errors.
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "orderband/npy_io.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

using test::crystal_data;
using test::run_orderband;

TEST(CliSphere, WritesTheSphereAndLoadsItFromTheCacheOnlyForTheSameInputs) {
  const std::string dir = test::make_temp_dir("cli-sphere");
  const std::string common = "sphere " + crystal_data("ni3al-gamma-prime.cif") +
                             " --nside 8 --max-g 1.2 --strong-limit 16 --weak-limit 80 -q --cache " + dir + "/cache";
  const auto first = run_orderband(common + " -o " + dir + "/out/a.npy");
  ASSERT_EQ(first.exit_code, 0) << first.err;
  EXPECT_NE(first.out.find("computed"), std::string::npos) << first.out;
  const NpyArray a = read_npy(dir + "/out/a.npy");
  ASSERT_EQ(a.shape.size(), 2u);
  EXPECT_EQ(a.shape[1], 12u * 8 * 8);
  for (float v : a.values) EXPECT_TRUE(v > 0 && v < 10) << v;
  const auto side = nlohmann::json::parse(test::read_file_bytes(dir + "/out/a.json"));
  EXPECT_EQ(side["tool"], "orderband");
  EXPECT_EQ(side["parameters"]["nside"], 8);
  EXPECT_DOUBLE_EQ(side["parameters"]["kilovolts"].get<double>(), 20.0);
  EXPECT_NE(side["command"].get<std::string>().find("--strong-limit 16"), std::string::npos);
  EXPECT_TRUE(std::filesystem::exists(dir + "/out/a.png"));

  // Same inputs: loaded from the cache, the same values.
  const auto second = run_orderband(common + " -o " + dir + "/out/b.npy");
  ASSERT_EQ(second.exit_code, 0) << second.err;
  EXPECT_NE(second.out.find("loaded from the cache"), std::string::npos) << second.out;
  EXPECT_EQ(test::read_file_bytes(dir + "/out/a.npy"), test::read_file_bytes(dir + "/out/b.npy"));
  // Another parameter: computed again, other values.
  const auto third = run_orderband(common + " --absorption 0.05 -o " + dir + "/out/c.npy");
  ASSERT_EQ(third.exit_code, 0) << third.err;
  EXPECT_NE(third.out.find("computed"), std::string::npos) << third.out;
  EXPECT_NE(test::read_file_bytes(dir + "/out/a.npy"), test::read_file_bytes(dir + "/out/c.npy"));
}

TEST(CliSphere, RejectsBadInputWithOneLine) {
  const std::string dir = test::make_temp_dir("cli-sphere-bad");
  const auto nside =
      run_orderband("sphere " + crystal_data("ni-fcc.cif") + " --nside 12 --no-cache -o " + dir + "/x.npy");
  EXPECT_NE(nside.exit_code, 0);
  EXPECT_NE(nside.err.find("power of two"), std::string::npos) << nside.err;
  const auto limits = run_orderband("sphere " + crystal_data("ni-fcc.cif") +
                                    " --strong-limit 50 --weak-limit 10 --no-cache -o " + dir + "/x.npy");
  EXPECT_NE(limits.exit_code, 0);
  EXPECT_NE(limits.err.find("--weak-limit"), std::string::npos) << limits.err;
  EXPECT_FALSE(std::filesystem::exists(dir + "/x.npy"));
}

}  // namespace
}  // namespace orderband
