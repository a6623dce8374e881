// `map` and `screen` shared among the processes of an MPI launch: the same numbers as one process,
// with 2 and 4 processes, and a killed launch resumed (built only with ORDERBAND_MPI; the tests
// start mpirun).
#include <gtest/gtest.h>

#include <sys/wait.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "test_support.hpp"

namespace fs = std::filesystem;

namespace orderband {
namespace {

std::string launch_file(const std::string& path) { return test::read_file_bytes(path); }
std::string launch_after_first_line(const std::string& text) { return text.substr(text.find('\n') + 1); }

/// mpirun with N processes (more than the cores allowed; as root, which CI runs as, allowed too).
test::RunResult run_launched(int processes, const std::string& args) {
  return test::run_command("OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 " ORDERBAND_MPIRUN " -np " +
                           std::to_string(processes) + " --oversubscribe " + ORDERBAND_BINARY + " " + args);
}

/// One [[trial]] table of a trials description.
std::string trial_entry(const std::string& label, const std::string& source_key, const std::string& path,
                        double temperature_c, double time_h) {
  std::ostringstream t;
  t << "[[trial]]\nlabel = \"" << label << "\"\n"
    << source_key << " = \"" << path << "\"\ntemperature_c = " << temperature_c << "\ntime_h = " << time_h << "\n";
  return t.str();
}

/// Five trials: three scans of their own, two from one scenario (the same process makes its scan).
std::string write_trials(const std::string& dir) {
  std::ofstream trials(dir + "/trials.toml");
  trials << "[screen]\ntitle = \"processes\"\n[target]\nordered_fraction = [0.2, 0.4]\n";
  for (int i = 0; i < 3; ++i) {
    const std::string sub = dir + "/scan" + std::to_string(i);
    fs::create_directories(sub);
    trials << trial_entry("S" + std::to_string(i), "scan", test::write_small_scan(sub, 14, 61 + i), 760, 2 << i);
  }
  std::ofstream(dir + "/scenario.toml") << "[scenario]\nseed = 71\n[scan]\nrows = 14\ncols = 14\nstep_um = 0.03\n"
                                           "[detector]\nwidth_px = 48\nheight_px = 48\npc_px = [24.0, 15.0]\n"
                                           "distance_px = 36.0\n[patterns]\ncounts_per_px = 5000\n[grains]\n"
                                           "count = 2\n[secondary]\narea_fraction = 0.25\ndistribution = "
                                           "\"lognormal\"\nmedian_diameter_um = 0.12\nsigma_ln = 0.2\n";
  for (const char* label : {"P", "Q"})
    trials << trial_entry(label, "scenario", dir + "/scenario.toml", 800, label[0] == 'P' ? 8 : 32);
  return dir + "/trials.toml";
}

/// Every trial's maps and tables, byte for byte, and the comparison but for the lines that name
/// the command.
void expect_same_screen(const std::string& a, const std::string& b) {
  for (const char* label : {"S0", "S1", "S2", "P", "Q"})
    for (const char* file : {"ordered_fraction.npy", "particle_labels.npy", "grain_ids.npy", "run_key.txt"})
      EXPECT_EQ(launch_file(a + "/" + label + "/" + file), launch_file(b + "/" + label + "/" + file))
          << label << " " << file;
  EXPECT_EQ(launch_after_first_line(launch_file(a + "/comparison.csv")),
            launch_after_first_line(launch_file(b + "/comparison.csv")));
  auto numbers = [](const std::string& path) {
    nlohmann::json j = nlohmann::json::parse(test::read_file_bytes(path));
    return nlohmann::json{{"trials", j["trials"]}, {"ranking", j["ranking"]}, {"kinetics", j["kinetics"]}};
  };
  EXPECT_EQ(numbers(a + "/comparison.json"), numbers(b + "/comparison.json"));
  EXPECT_EQ(launch_file(a + "/screen_log.txt"), launch_file(b + "/screen_log.txt"));
}

TEST(CliScreenProcesses, TwoAndFourProcessesGiveTheNumbersOfOne) {
  const std::string dir = test::make_temp_dir("screen-mpi");
  setenv("ORDERBAND_CACHE", (dir + "/cache").c_str(), 1);
  const std::string trials = write_trials(dir);
  auto one = test::run_orderband("screen " + trials + " -o " + dir + "/one --quiet");
  ASSERT_EQ(one.exit_code, 0) << one.err;
  auto two = run_launched(2, "screen " + trials + " -o " + dir + "/two --quiet");
  ASSERT_EQ(two.exit_code, 0) << two.out << two.err;
  EXPECT_NE(two.out.find("report: " + dir + "/two/report.html"), std::string::npos) << two.out;
  EXPECT_EQ(two.out.find("report:"), two.out.rfind("report:")) << "one process prints the report line: " << two.out;
  auto four = run_launched(4, "screen " + trials + " -o " + dir + "/four --quiet");
  ASSERT_EQ(four.exit_code, 0) << four.err;
  expect_same_screen(dir + "/one", dir + "/two");
  expect_same_screen(dir + "/one", dir + "/four");
  // A second launch with another number of processes takes every trial the first one finished.
  auto again = run_launched(3, "screen " + trials + " -o " + dir + "/two --quiet");
  ASSERT_EQ(again.exit_code, 0) << again.err;
  const std::string log = launch_file(dir + "/two/screen_log.txt");
  for (const char* label : {"S0", "S1", "S2", "P", "Q"})
    EXPECT_NE(log.find("trial " + std::string(label) + ": reused"), std::string::npos) << log;
  unsetenv("ORDERBAND_CACHE");
  fs::remove_all(dir);
}

/// Bunge Euler angles per point of an orientations table (row, col, φ1, Φ, φ2, phase).
std::vector<std::array<double, 3>> launch_euler_angles(const std::string& path) {
  std::istringstream in(launch_file(path));
  std::string line;
  std::vector<std::array<double, 3>> out;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#' || line.rfind("row", 0) == 0) continue;
    std::array<double, 5> v{};
    std::istringstream fields(line);
    std::string field;
    for (double& x : v) std::getline(fields, field, ','), x = std::stod(field);
    out.push_back({v[2], v[3], v[4]});
  }
  return out;
}

/// One scan mapped by a launch against the same scan mapped by one process. Each process also
/// computes the row above its block (and discards it), so its first row starts from the row above
/// as with one process; but that row was itself indexed from scratch, so the refined orientations
/// differ within the refinement's tolerance, and the fractions and sizes with them: measured on
/// 40 × 40 and 96 × 96 scans with 2 and 4 processes, Euler angles within 0.0022°, fractions within
/// 4 × 10⁻⁵, the area fraction within 3 × 10⁻⁶, particle labels identical; grains and point states
/// identical. A point's fraction is sensitive to its binning orientation (0.005° moves pixels
/// between profile bins, DEVELOPERS "Known limits"): on a 30 × 30 scan at 48 × 48 px shared by a
/// crew of 2, orientations 0.0016° apart moved one point's fraction by 0.015, the KAM by 0.0012°
/// and the end members' mean by 0.0014; so float maps within 0.03 and every number of
/// summary.json within 5 × 10⁻³ (`every_output`; there a particle of the minimum size also came
/// and went, with the counts that follow). A row restored from the wrong place would be degrees
/// off. (Before the row above was
/// computed, a block's first row was indexed from scratch: 0.028°, and on one 30 × 30 scan one
/// point 0.79° off, the area 4 × 10⁻⁴.)
/// Every number of two JSON documents within 5 × 10⁻³ (absolute or relative), everything else
/// equal (the command line aside).
void expect_json_near(const nlohmann::json& a, const nlohmann::json& b, const std::string& path) {
  if (a.is_object()) {
    ASSERT_TRUE(b.is_object()) << path;
    EXPECT_EQ(a.size(), b.size()) << path;
    for (const auto& [key, value] : a.items())
      if (key != "command_line") {
        ASSERT_TRUE(b.contains(key)) << path << "/" << key;
        expect_json_near(value, b[key], path + "/" + key);
      }
  } else if (a.is_array()) {
    ASSERT_TRUE(b.is_array() && a.size() == b.size()) << path;
    for (size_t i = 0; i < a.size(); ++i) expect_json_near(a[i], b[i], path + "[" + std::to_string(i) + "]");
  } else if (a.is_number() && !a.is_boolean()) {
    ASSERT_TRUE(b.is_number()) << path;
    const double x = a.get<double>(), y = b.get<double>();
    EXPECT_LE(std::abs(x - y), 5e-3 * std::max(1.0, std::max(std::abs(x), std::abs(y)))) << path;
  } else {
    EXPECT_EQ(a, b) << path;
  }
}

/// Every array file of two map folders: float maps within 0.03 (NaN where the other is NaN),
/// the others byte for byte (particle labels aside, compared below).
void expect_arrays_near(const std::string& one, const std::string& launched) {
  int compared = 0;
  for (const auto& entry : fs::directory_iterator(one)) {
    const std::string name = entry.path().filename().string();
    if (entry.path().extension() != ".npy" || name == "particle_labels.npy") continue;
    const std::string a = launch_file(entry.path().string()), b = launch_file(launched + "/" + name);
    ASSERT_EQ(a.size(), b.size()) << name;
    const size_t header = a.find('\n') + 1;
    ASSERT_EQ(a.substr(0, header), b.substr(0, header)) << name;
    ++compared;
    if (a.substr(0, header).find("'<f4'") == std::string::npos) {
      EXPECT_EQ(a, b) << name;
      continue;
    }
    float worst = 0;
    for (size_t at = header; at + 4 <= a.size(); at += 4) {
      float x = 0, y = 0;
      std::memcpy(&x, a.data() + at, 4), std::memcpy(&y, b.data() + at, 4);
      if (std::isnan(x) || std::isnan(y))
        EXPECT_TRUE(std::isnan(x) && std::isnan(y)) << name;
      else
        worst = std::max(worst, std::abs(x - y));
    }
    EXPECT_LE(worst, 0.03f) << name;
  }
  EXPECT_GE(compared, 8);
}

void expect_same_map(const std::string& one, const std::string& launched, bool every_output = true) {
  if (every_output) {
    expect_arrays_near(one, launched);
    expect_json_near(nlohmann::json::parse(launch_file(one + "/summary.json")),
                     nlohmann::json::parse(launch_file(launched + "/summary.json")), "summary.json");
  }
  const auto a = launch_euler_angles(one + "/orientations.csv"),
             b = launch_euler_angles(launched + "/orientations.csv");
  ASSERT_EQ(a.size(), b.size());
  double worst = 0;
  for (size_t k = 0; k < a.size(); ++k)
    for (int i = 0; i < 3; ++i) {
      const double d = std::fmod(std::abs(a[k][i] - b[k][i]), 360.0);
      worst = std::max(worst, std::min(d, 360.0 - d));
    }
  EXPECT_LT(worst, 0.1) << "largest Euler angle difference (°)";
  const auto fa = nlohmann::json::parse(launch_file(one + "/summary.json"));
  const auto fb = nlohmann::json::parse(launch_file(launched + "/summary.json"));
  EXPECT_NEAR(fa["ordered_area_fraction"].get<double>(), fb["ordered_area_fraction"].get<double>(), 1e-4);
  // The same particles but where a point's fraction sits at the threshold: a particle of the
  // minimum size may come or go (seen once, before the row above was computed: an 8-point particle,
  // a point at 0.496 against 0.504), so particle points labelled alike but for 2 % and the
  // particle count within one.
  const std::string la = launch_file(one + "/particle_labels.npy"), lb = launch_file(launched + "/particle_labels.npy");
  ASSERT_EQ(la.size(), lb.size());
  const size_t header = la.find('\n') + 1, points = (la.size() - header) / 4;
  size_t differ = 0;
  for (size_t k = 0; k < points; ++k) {
    int32_t x = 0, y = 0;
    std::memcpy(&x, la.data() + header + 4 * k, 4), std::memcpy(&y, lb.data() + header + 4 * k, 4);
    differ += (x > 0) != (y > 0);
  }
  EXPECT_LE(differ, points / 50);
  auto count_lines = [](const std::string& text) { return std::count(text.begin(), text.end(), '\n'); };
  const auto pa = count_lines(launch_file(one + "/particles.csv")),
             pb = count_lines(launch_file(launched + "/particles.csv"));
  EXPECT_LE(std::abs(pa - pb), 1);
  EXPECT_GT(pa, 5);
}

TEST(CliMapProcesses, TwoAndFourProcessesMapOneScanAsOneDoesAndAKilledLaunchResumes) {
  const std::string dir = test::make_temp_dir("map-mpi");
  fs::create_directories(dir + "/s");
  const std::string scan = test::write_small_scan(dir + "/s", 40, 17);
  auto one = test::run_orderband("map " + scan + " -o " + dir + "/one --quiet");
  ASSERT_EQ(one.exit_code, 0) << one.err;
  for (int processes : {2, 4}) {
    const std::string out = dir + "/p" + std::to_string(processes);
    auto r = run_launched(processes, "map " + scan + " -o " + out);
    ASSERT_EQ(r.exit_code, 0) << r.err;
    EXPECT_EQ(r.err.find("report:"), r.err.rfind("report:")) << "rank 0 alone reports: " << r.err;
    expect_same_map(dir + "/one", out);
    EXPECT_FALSE(fs::exists(out + "/.resume"));  // cleared after a complete run
  }
  // A launch whose process dies: mpirun ends the others and exits non-zero; a launch with another
  // number of processes takes the rows the first one committed.
  const std::string out = dir + "/killed";
  // One process of the launch is killed: the newest whose command line starts with the program
  // (not mpirun's, not the shell's around pkill, whose text "[m]ap" the pattern does not match).
  const test::InterruptedRun run = test::interrupt_after_rows(
      "env OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 " ORDERBAND_MPIRUN
      " -np 2 --oversubscribe " ORDERBAND_BINARY " map " +
          scan + " -o " + out + " --quiet",
      out + "/.resume", "orient", 6,
      [&](int) {
        return test::run_command("pkill -KILL -n -f '^" ORDERBAND_BINARY " [m]ap " + scan + " -o " + out + "'")
                   .exit_code == 0;
      },
      5);
  ASSERT_FALSE(run.exited) << "the launch finished before it could be interrupted";
  ASSERT_TRUE(run.stopped);
  EXPECT_TRUE(WIFEXITED(run.status) && WEXITSTATUS(run.status) != 0) << "mpirun's status " << run.status;
  ASSERT_FALSE(fs::exists(out + "/summary.json"));
  auto resumed = run_launched(3, "map " + scan + " -o " + out);
  ASSERT_EQ(resumed.exit_code, 0) << resumed.err;
  EXPECT_NE(resumed.err.find("row results taken from the interrupted run"), std::string::npos) << resumed.err;
  expect_same_map(dir + "/one", out);
  fs::remove_all(dir);
}

TEST(CliScreenProcesses, MoreProcessesThanTrialsShareEachTrialsRows) {
  // 5 processes, 2 trials: a crew of 3 maps the first trial's rows together, a crew of 2 the
  // second's; each trial's map as map_to_folder shared among its crew gives it (see
  // expect_same_map), the comparison's fractions within 10⁻⁴ of one process's.
  const std::string dir = test::make_temp_dir("screen-crews");
  std::ofstream trials(dir + "/trials.toml");
  trials << "[screen]\ntitle = \"crews\"\n";
  for (int i = 0; i < 2; ++i) {
    const std::string sub = dir + "/scan" + std::to_string(i);
    fs::create_directories(sub);
    trials << trial_entry("T" + std::to_string(i), "scan", test::write_small_scan(sub, 30, 81 + i), 760, 4 << (2 * i));
  }
  trials.close();
  auto one = test::run_orderband("screen " + dir + "/trials.toml -o " + dir + "/one --quiet");
  ASSERT_EQ(one.exit_code, 0) << one.err;
  auto five = run_launched(5, "screen " + dir + "/trials.toml -o " + dir + "/five --quiet");
  ASSERT_EQ(five.exit_code, 0) << five.err;
  const std::string log = launch_file(dir + "/five/screen_log.txt");
  for (const char* label : {"T0", "T1"}) {
    EXPECT_NE(log.find("trial " + std::string(label) + ": computed"), std::string::npos) << log;
    // Not every output: a particle of the minimum size came and went on this small, noisy scan
    // (30 × 30 points at 48 × 48 px), with the counts that follow from it.
    expect_same_map(dir + "/one/" + label, dir + "/five/" + label, false);
  }
  const auto a = nlohmann::json::parse(launch_file(dir + "/one/comparison.json"));
  const auto b = nlohmann::json::parse(launch_file(dir + "/five/comparison.json"));
  ASSERT_EQ(a["trials"].size(), 2u);
  ASSERT_EQ(b["trials"].size(), 2u);
  for (size_t i = 0; i < 2; ++i)
    EXPECT_NEAR(a["trials"][i]["ordered_area_fraction"].get<double>(),
                b["trials"][i]["ordered_area_fraction"].get<double>(), 1e-4);
  if (!HasFailure()) fs::remove_all(dir);
}

TEST(CliScreenProcesses, OtherCommandsRefuseSeveralProcessesInOneLine) {
  const std::string dir = test::make_temp_dir("orient-mpi");
  fs::create_directories(dir + "/s");
  const std::string scan = test::write_small_scan(dir + "/s", 8, 5);
  auto r = run_launched(2, "orient " + scan + " -o " + dir + "/out --quiet");
  EXPECT_NE(r.exit_code, 0);
  EXPECT_NE(r.err.find("orderband orient: error: runs as one process"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(dir + "/out/orientations.csv"));
  fs::remove_all(dir);
}

}  // namespace
}  // namespace orderband
