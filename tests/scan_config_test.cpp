// Scan description: reading, defaults, relative paths, round trip, one clear error per problem.
#include "orderband/scan_config.hpp"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>

#include "orderband/error.hpp"
#include "orderband/scan_config_toml.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

const std::string kMinimal = R"(
[scan]
rows = 3
cols = 4
step_um = 0.05

[patterns]
format = "raw"
file = "data/p.raw"
width_px = 20
height_px = 16

[geometry]
pc_px = [10.0, 5.5]
distance_px = 18.0
)";

std::string error_of(const std::string& text) {
  try {
    parse_scan_config(text, "/tmp/scans/s.toml");
  } catch (const Error& e) {
    return e.what();
  }
  return "no error";
}

TEST(ScanConfig, DefaultsAndRelativePaths) {
  const ScanConfig c = parse_scan_config(kMinimal, "/tmp/scans/s.toml");
  EXPECT_EQ(c.grid.kind, GridKind::square);
  EXPECT_EQ(c.grid.count(), 12u);
  EXPECT_EQ(c.patterns.path, "/tmp/scans/data/p.raw");  // relative to the description's folder
  EXPECT_EQ(c.patterns.sample_type, SampleType::uint16);
  EXPECT_DOUBLE_EQ(c.geometry.sample_tilt_deg, 70.0);
  EXPECT_DOUBLE_EQ(c.kv, 20.0);
  EXPECT_EQ(c.phases.pair_name, "ni");
  EXPECT_EQ(c.orientations.source, OrientationSourceKind::find);
  EXPECT_EQ(c.preprocess.static_background, StaticBackgroundKind::scan_mean);
  EXPECT_DOUBLE_EQ(c.preprocess.dynamic_background_sigma_px, -1.0);  // 0.1 × width when used
  EXPECT_EQ(c.output_folder, "/tmp/scans/orderband-out");
  EXPECT_FALSE(c.geometry.screen_pixel_um.has_value());
}

TEST(ScanConfig, WriteThenReadGivesTheSameValues) {
  std::string text = kMinimal;
  text.replace(text.find("rows = 3"), 8, "grid = \"hexagonal\"\nrows = 3");
  text +=
      "binning = 2\nscreen_pixel_um = 59.5\ndetector_tilt_deg = -3.25\n[microscope]\nkv = 15\n"
      "[preprocess]\nneighbour_sigma_steps = 0.8\nhot_pixel_filter = true\n[orientations]\nsource = \"file\"\n"
      "file = \"o \\\"1\\\".csv\"\nrefine = false\n";
  const ScanConfig a = parse_scan_config(text, "/tmp/scans/s.toml");
  std::ostringstream os;
  write_scan_config(os, a, "/tmp/scans", "written by a test");
  const ScanConfig b = parse_scan_config(os.str(), "/tmp/scans/s.toml");
  EXPECT_EQ(b.grid.kind, GridKind::hexagonal);
  EXPECT_EQ(b.patterns.path, a.patterns.path);
  EXPECT_EQ(b.geometry.pc_px, a.geometry.pc_px);
  EXPECT_EQ(b.geometry.detector_tilt_deg, -3.25);
  EXPECT_EQ(*b.geometry.screen_pixel_um, 59.5);
  EXPECT_EQ(b.geometry.binning, 2);
  EXPECT_EQ(b.kv, 15.0);
  EXPECT_EQ(b.orientations.file, "/tmp/scans/o \"1\".csv");
  EXPECT_FALSE(b.orientations.refine);
  EXPECT_EQ(b.preprocess.neighbour_sigma_steps, 0.8);
  EXPECT_TRUE(b.preprocess.hot_pixel_filter);
  EXPECT_NE(os.str().find("# written by a test"), std::string::npos);
}

TEST(ScanConfig, ReferenceRegionsForTheEndMembers) {
  const ScanConfig c =
      parse_scan_config(kMinimal +
                            "[fraction]\nend_members = \"regions\"\n"
                            "ordered_regions = [[0, 0, 1, 1]]\ndisordered_regions = [[2, 2, 2, 3], [0, 3, 0, 3]]\n",
                        "/tmp/scans/s.toml");
  EXPECT_EQ(c.end_members.mode, "regions");
  ASSERT_EQ(c.end_members.disordered_regions.size(), 2u);
  EXPECT_EQ(c.end_members.disordered_regions[0], (std::array<int, 4>{2, 2, 2, 3}));
  std::ostringstream os;
  write_scan_config(os, c, "/tmp/scans");
  EXPECT_EQ(parse_scan_config(os.str(), "/tmp/scans/s.toml").end_members.ordered_regions,
            c.end_members.ordered_regions);
  auto error_of = [](const std::string& extra) {
    try {
      parse_scan_config(kMinimal + extra, "/tmp/scans/s.toml");
    } catch (const Error& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  // A disordered region is needed; the ordered one may be left out (the learned estimator's ordered
  // end member is the scan's particles; the model-led one refuses that when it runs).
  EXPECT_NE(error_of("[fraction]\nend_members = \"regions\"\nordered_regions = [[0, 0, 1, 1]]\n")
                .find("needs disordered_regions or disordered_mask"),
            std::string::npos);
  EXPECT_EQ(error_of("[fraction]\nend_members = \"regions\"\ndisordered_regions = [[0, 0, 1, 1]]\n"), "no error");
  EXPECT_NE(error_of("[fraction]\nordered_regions = [[0, 0, 9, 1]]\n").find("is not inside the 3 x 4 grid"),
            std::string::npos);
  EXPECT_NE(error_of("[fraction]\nend_members = \"guess\"\n").find("is not \"model\""), std::string::npos);
  EXPECT_NE(
      error_of("[fraction]\nordered_mask = \"nowhere.npy\"\n").find("ordered_mask = \"nowhere.npy\": no such file"),
      std::string::npos);
}

TEST(ScanConfig, ReferenceMasksResolveBesideTheDescription) {
  const std::string dir = test::make_temp_dir("scanmask");
  std::ofstream(dir + "/gamma_prime.png") << "x";  // existence is all the description checks
  std::filesystem::create_directories(dir + "/refs");
  std::ofstream(dir + "/refs/gamma.npy") << "x";
  const ScanConfig c =
      parse_scan_config(kMinimal +
                            "[fraction]\nend_members = \"regions\"\nordered_mask = \"gamma_prime.png\"\n"
                            "disordered_mask = \"refs/gamma.npy\"\n",
                        dir + "/s.toml");
  EXPECT_EQ(c.end_members.ordered_mask, dir + "/gamma_prime.png");
  EXPECT_EQ(c.end_members.disordered_mask, dir + "/refs/gamma.npy");
  std::ostringstream os;
  write_scan_config(os, c, dir);
  const ScanConfig again = parse_scan_config(os.str(), dir + "/s.toml");
  EXPECT_EQ(again.end_members.ordered_mask, c.end_members.ordered_mask);
  EXPECT_EQ(again.end_members.disordered_mask, c.end_members.disordered_mask);
  std::filesystem::remove_all(dir);
}

TEST(ScanConfig, OneClearLinePerProblem) {
  auto with = [](const std::string& from, const std::string& to) {
    std::string t = kMinimal;
    t.replace(t.find(from), from.size(), to);
    return t;
  };
  EXPECT_NE(error_of(with("rows = 3", "rows = 0")).find("rows and cols must be positive"), std::string::npos);
  EXPECT_NE(
      error_of(with("step_um = 0.05", "step_um = -1")).find("step_um must be a finite number within [0.0001, 1000] µm"),
      std::string::npos);
  EXPECT_NE(error_of(with("format = \"raw\"", "format = \"zip\"")).find("format = \"zip\" is not"), std::string::npos);
  EXPECT_NE(error_of(with("width_px = 20\n", "")).find("a raw stack needs width_px and height_px"), std::string::npos);
  EXPECT_NE(error_of(with("pc_px = [10.0, 5.5]", "pc_px = 10")).find("pc_px must be [x, y]"), std::string::npos);
  EXPECT_NE(error_of(with("rows = 3", "rows = 3\nstep = 2")).find("unknown key 'step' in [scan]"), std::string::npos);
  EXPECT_NE(error_of(kMinimal + "[scna]\n").find("unknown table [scna]"), std::string::npos);
  EXPECT_NE(error_of(kMinimal + "[microscope]\nkv = 0\n").find("kv must be a finite number within [1, 1000] kV"),
            std::string::npos);
  EXPECT_NE(error_of(kMinimal + "[phases]\nordered = \"x.cif\"\n").find("go together"), std::string::npos);
  EXPECT_NE(error_of(with("rows = 3", "rows = \"three\"")).find("rows must be an integer"), std::string::npos);
  EXPECT_NE(error_of("[scan\n").find("/tmp/scans/s.toml:1"), std::string::npos);
  EXPECT_NE(error_of(kMinimal + "[orientations]\nsource = \"file\"\n").find("needs 'file'"), std::string::npos);
  EXPECT_THROW(read_scan_config("/no/such/scan.toml"), Error);
}

TEST(ScanConfig, EveryNumberIsFiniteAndInsideItsNamedRange) {
  // Values that once crashed, hung or ran away with memory (1e200 µm steps, 1e9 px backgrounds) or
  // were taken silently (NaN): each is one clear error naming its key.
  const std::vector<std::pair<std::string, std::string>> replace{{"step_um = 1e200", "step_um"},
                                                                 {"step_um = 1e-200", "step_um"},
                                                                 {"step_um = nan", "step_um"},
                                                                 {"distance_px = nan", "distance_px"},
                                                                 {"distance_px = inf", "distance_px"}};
  for (const auto& [to, key] : replace) {
    std::string t = kMinimal;
    const std::string from = key == "step_um" ? "step_um = 0.05" : "distance_px = 18.0";
    t.replace(t.find(from), from.size(), to);
    const std::string e = error_of(t);
    EXPECT_NE(e.find(key + " must be a finite number within"), std::string::npos) << to << ": " << e;
  }
  for (const auto& [extra, key] : std::vector<std::pair<std::string, std::string>>{
           {"static_background_sigma_px = 1e9", "static_background_sigma_px"},
           {"static_background_sigma_px = nan", "static_background_sigma_px"},
           {"dynamic_background_sigma_px = 1e9", "dynamic_background_sigma_px"},
           {"dynamic_background_sigma_px = nan", "dynamic_background_sigma_px"},
           {"mask_radius_px = nan", "mask_radius_px"},
           {"neighbour_sigma_steps = nan", "neighbour_sigma_steps"},
           {"neighbour_sigma_steps = 1e9", "neighbour_sigma_steps"},
           {"hot_pixel_threshold = nan", "hot_pixel_threshold"}}) {
    const std::string e = error_of(kMinimal + "[preprocess]\n" + extra + "\n");
    EXPECT_NE(e.find(key + " must be a finite number within"), std::string::npos) << extra << ": " << e;
  }
  EXPECT_NE(error_of(kMinimal + "[microscope]\nkv = nan\n").find("kv must be a finite number"), std::string::npos);
  // The defaults and the documented "−1: default" still read.
  EXPECT_EQ(error_of(kMinimal + "[preprocess]\nstatic_background_sigma_px = -1\ndynamic_background_sigma_px = 0\n"),
            "no error");
}

}  // namespace
}  // namespace orderband
