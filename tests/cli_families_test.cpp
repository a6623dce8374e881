// `orderband families` end to end: tables, machine formats, errors and exit codes.
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <sstream>

#include "orderband/bloch_waves.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

using test::run_orderband;

TEST(CliFamilies, DefaultIsTheNickelPair) {
  const auto r = run_orderband("families");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("# orderband "), std::string::npos);
  EXPECT_NE(r.out.find("8.5885 pm"), std::string::npos);
  EXPECT_NE(r.out.find("ni3al_gamma_prime"), std::string::npos);
  // {100} row: multiplicity 3, d = 3.5720 Å, superlattice.
  const auto pos = r.out.find("\n{100}");
  ASSERT_NE(pos, std::string::npos);
  const std::string row = r.out.substr(pos + 1, r.out.find('\n', pos + 1) - pos - 1);
  EXPECT_NE(row.find("3.5720"), std::string::npos) << row;
  EXPECT_NE(row.find("superlattice"), std::string::npos) << row;
}

TEST(CliFamilies, JsonCarriesProvenanceAndNumbers) {
  const auto r = run_orderband("families --pair co --kv 15 --format json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["tool"], "orderband");
  EXPECT_FALSE(j["version"].get<std::string>().empty());
  EXPECT_NE(j["command_line"].get<std::string>().find("--kv 15"), std::string::npos);
  EXPECT_DOUBLE_EQ(j["parameters"]["accelerating_voltage_kv"].get<double>(), 15.0);
  EXPECT_NEAR(j["parameters"]["electron_wavelength_pm"].get<double>(), 9.9410, 1e-3);  // computed, reference table
  bool saw_100 = false;
  for (const auto& f : j["families"]) {
    if (f["family"] == "{100}") {
      saw_100 = true;
      EXPECT_EQ(f["role"], "superlattice");
      EXPECT_EQ(f["multiplicity"], 3);
    }
  }
  EXPECT_TRUE(saw_100);
}

TEST(CliFamilies, CsvOfSinglePhases) {
  const std::string ni = std::string(ORDERBAND_TEST_DATA_DIR) + "/ni-fcc.cif";
  const auto r = run_orderband("families " + ni + " " + ni + " --d-min 1.0 --format csv");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::istringstream in(r.out);
  std::string line;
  int data_rows = 0;
  bool header = false;
  while (std::getline(in, line)) {
    if (line.rfind("#", 0) == 0) continue;
    if (!header) {
      EXPECT_EQ(line, "phase,family,h,k,l,multiplicity,d_A,bragg_deg,f_abs_A,rel_intensity");
      header = true;
      continue;
    }
    ++data_rows;
  }
  // fcc Ni with d ≥ 1.0 Å: {111} {200} {220} {311} {222}, twice.
  EXPECT_EQ(data_rows, 10);
  EXPECT_NE(r.out.find("ni_fcc,\"{111}\",1,1,1,4,2.034"), std::string::npos);
}

TEST(CliFamilies, DynamicalProfilesOfBothPhasesFromTheSphereCache) {
  // The pair's band profiles on both phases' many-beam spheres (nside 64, the default beam set):
  // the JSON carries the spheres' parameters and every family's profiles; a second run loads the
  // spheres from the cache and prints the same numbers as text. Ordering adds the {110}
  // superlattice band: its interior over its flanks rises (measured +0.034 at nside 128).
  const std::string cache = test::make_temp_dir("families-spheres");
  const auto r = run_orderband("families --dynamical --nside 64 --d-min 1.2 --format json -q --cache " + cache);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(r.out);
  const auto& spheres = j["parameters"]["dynamical_spheres"];
  EXPECT_EQ(spheres["nside"], 64);
  EXPECT_EQ(spheres["strong_limit"].get<double>(), kSphereBeams.strong_limit);
  EXPECT_DOUBLE_EQ(spheres["mean_depth_nm"].get<double>(), 10);
  double change_110 = std::nan("");
  for (const auto& f : j["families"]) {
    const auto& d = f["dynamical"];
    ASSERT_EQ(d["u"].size(), 20u) << f["family"];
    ASSERT_EQ(d["profile_ordered"].size(), 20u) << f["family"];
    for (const auto& v : d["profile_disordered"]) EXPECT_TRUE(v.is_number()) << f["family"];  // no empty bin at 64
    if (f["family"] == "{110}")
      change_110 = d["contrast_ordered"].get<double>() - d["contrast_disordered"].get<double>();
  }
  EXPECT_GT(change_110, 0.01);
  int spheres_cached = 0;
  for (const auto& e : std::filesystem::directory_iterator(cache)) spheres_cached += e.path().extension() == ".npy";
  EXPECT_EQ(spheres_cached, 2);

  const auto text = run_orderband("families --dynamical --nside 64 --d-min 1.2 -q --cache " + cache);
  ASSERT_EQ(text.exit_code, 0) << text.err;
  const auto pos = text.out.find("\n{110}  ", text.out.find("# band profiles on many-beam spheres"));
  ASSERT_NE(pos, std::string::npos) << text.out;
  std::istringstream row(text.out.substr(pos + 1));
  std::string label;
  double contrast_ordered = 0, contrast_disordered = 0;
  row >> label >> contrast_ordered >> contrast_disordered;
  for (const auto& f : j["families"])
    if (f["family"] == "{110}") {
      EXPECT_NEAR(contrast_ordered, f["dynamical"]["contrast_ordered"].get<double>(), 1e-4);
      EXPECT_NEAR(contrast_disordered, f["dynamical"]["contrast_disordered"].get<double>(), 1e-4);
    }
  std::filesystem::remove_all(cache);
}

TEST(CliFamilies, ErrorsAreOneLineWithNonZeroExit) {
  auto expect_error = [](const std::string& args, const std::string& needle, int code) {
    const auto r = run_orderband(args);
    EXPECT_EQ(r.exit_code, code) << args;
    EXPECT_NE(r.err.find(needle), std::string::npos) << r.err;
    if (code == 1) {
      EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1) << r.err;
    }
    EXPECT_TRUE(r.out.empty());
  };
  expect_error("families --kv 0", "orderband families: error: --kv: '0' is outside [1, 1000]", 2);
  expect_error("families --kv -3", "orderband families: error: --kv: '-3' is outside [1, 1000]", 2);
  expect_error("families /no/such.cif", "cannot read CIF file '/no/such.cif'", 1);
  expect_error("families --pair brass", "unknown phase pair 'brass'", 1);
  expect_error("families --ordered x.cif", "--ordered and --disordered go together", 1);
  expect_error("families --format xml", "--format", 2);
  expect_error("families --no-such-option", "no-such-option", 2);
  const std::string ni = std::string(ORDERBAND_TEST_DATA_DIR) + "/ni-fcc.cif";
  expect_error("families " + ni + " --dynamical", "--dynamical compares the two phases of a pair", 1);
  expect_error("families --dynamical --nside 96", "--nside must be a power of two, got 96", 1);
  expect_error("families --dynamical --nside 32", "--nside", 2);
}

}  // namespace
}  // namespace orderband
