// `orderband check`: summary numbers by hand and one clear error line for bad data.
#include <gtest/gtest.h>
#include <sys/stat.h>

#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>

#include "test_support.hpp"

namespace orderband {
namespace {

struct SmallScan {
  std::string dir;
  SmallScan(size_t drop_bytes = 0) : dir(test::make_temp_dir("check")) {
    std::mt19937 rng(1);
    std::poisson_distribution<int> counts(800);
    std::vector<uint16_t> data(4 * 5 * 40 * 40);
    for (auto& v : data) v = static_cast<uint16_t>(counts(rng));
    std::fill(data.begin() + 7 * 1600, data.begin() + 8 * 1600, 1000);  // point 7 is dead (constant)
    std::ofstream(dir + "/p.raw", std::ios::binary)
        .write(reinterpret_cast<const char*>(data.data()), data.size() * 2 - drop_bytes);
    std::ofstream(dir + "/scan.toml")
        << "[scan]\nrows = 4\ncols = 5\nstep_um = 0.05\n"
           "[patterns]\nformat = \"raw\"\nfile = \"p.raw\"\nwidth_px = 40\nheight_px = 40\n"
           "[geometry]\npc_px = [20.0, 10.0]\ndistance_px = 40.0\n";
  }
  ~SmallScan() { std::filesystem::remove_all(dir); }
};

TEST(CliCheck, SummaryNumbersByHand) {
  SmallScan s;
  const auto r = test::run_orderband("check " + s.dir + "/scan.toml --sample 20");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("4 rows x 5 cols = 20 points, step 0.05 um"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("field:       0.25 x 0.2 um"), std::string::npos) << r.out;
  // atan(1/40) = 1.4321° per pixel; the screen spans atan(20/40) + atan(20/40) = 53.13° across.
  EXPECT_NE(r.out.find("53.13 x"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("1.4321 deg per pixel"), std::string::npos) << r.out;
  // PC direction is +y_L = (0, −cos 70°, −sin 70°) in the sample frame.
  EXPECT_NE(r.out.find("[0.0000, -0.3420, -0.9397]"), std::string::npos) << r.out;
  // γ′ {111}: θ_B = 1.193°, band 2θ_B / 1.4321° = 1.67 px wide.
  const auto row = r.out.find("\n{111}");
  ASSERT_NE(row, std::string::npos);
  EXPECT_NE(r.out.substr(row, 80).find("1.67"), std::string::npos) << r.out.substr(row, 80);
  EXPECT_NE(r.out.find("20 patterns preprocessed, 1 unusable"), std::string::npos) << r.out;
}

TEST(CliCheck, ShortFileIsOneClearError) {
  SmallScan s(100);
  const auto r = test::run_orderband("check " + s.dir + "/scan.toml");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.err.find("orderband check: error: " + s.dir + "/p.raw is 63900 bytes, shorter than"), std::string::npos)
      << r.err;
  EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1);
  const auto missing = test::run_orderband("check " + s.dir + "/nothing.toml");
  EXPECT_EQ(missing.exit_code, 1);
  EXPECT_NE(missing.err.find("cannot read scan description"), std::string::npos);
}

TEST(CliCheck, ReadsTheOrientationFileMapWouldRead) {
  // check once never read the orientation table: a fractional row index (or any bad file) passed.
  SmallScan s;
  std::ofstream csv(s.dir + "/o.csv");
  csv << "row,col,phi1_deg,Phi_deg,phi2_deg\n";
  for (int r = 0; r < 4; ++r)
    for (int c = 0; c < 5; ++c) csv << (r == 2 && c == 3 ? "2.5" : std::to_string(r)) << ',' << c << ",10,20,30\n";
  csv.close();
  std::ofstream(s.dir + "/scan.toml", std::ios::app) << "[orientations]\nsource = \"file\"\nfile = \"o.csv\"\n";
  const auto r = test::run_orderband("check " + s.dir + "/scan.toml --sample 4");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.err.find("o.csv:15: row and col must be integers, got '2.5', '3'"), std::string::npos) << r.err;
}

}  // namespace
}  // namespace orderband

namespace orderband {

TEST(CliUsage, BadOptionValuesAreOneLineInTheDocumentedFormWithExitTwo) {
  // NaN, out-of-range and runaway values of options once ran (NaN thresholds, negative grain
  // sizes) or printed the parser's own lines (a 309-digit range for --threads -1).
  const std::vector<std::pair<std::string, std::string>> cases{
      {"map s.toml --threshold nan", "map"},      {"map s.toml --threshold -1", "map"},
      {"map s.toml --threshold 2", "map"},        {"map s.toml --grain-threshold nan", "map"},
      {"map s.toml --grain-threshold 0", "map"},  {"map s.toml --min-particle -5", "map"},
      {"map s.toml --threads 100000", "map"},     {"map s.toml --threads -1", "map"},
      {"map s.toml --class-bounds nan 1", "map"}, {"orient s.toml --grain-threshold -5", "orient"},
      {"orient s.toml --min-grain -3", "orient"}, {"check s.toml --sample -3", "check"},
      {"families --threshold nan", "families"},   {"families --kv 0", "families"},
      {"map s.toml --no-such-option", "map"}};
  for (const auto& [args, command] : cases) {
    const auto r = test::run_orderband(args);
    EXPECT_EQ(r.exit_code, 2) << args;
    EXPECT_EQ(r.err.rfind("orderband " + command + ": error: ", 0), 0u) << args << ": " << r.err;
    EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1) << args << ": " << r.err;
    EXPECT_LT(r.err.size(), 200u) << args;
  }
}

/// The scan description with one line replaced.
void write_edited(const std::string& from, const std::string& to, const std::string& line, const std::string& by) {
  std::ifstream in(from);
  std::ostringstream text;
  text << in.rdbuf();
  std::string s = text.str();
  const auto at = s.find(line);
  ASSERT_NE(at, std::string::npos) << line;
  s.replace(at, line.size(), by);
  std::ofstream(to) << s;
}

TEST(CliCheck, RefusesWhatMapWouldRefuse) {
  // Each of these passed check with "ok" and failed in map, or hung (the FIFO).
  const std::string dir = test::make_temp_dir("check-refuses");
  const std::string scan = test::write_small_scan(dir, 6, 2), folder = dir + "/scan/";
  auto one_line_error = [](const std::string& toml, const std::string& expected) {
    const auto r = test::run_command("timeout 20 " + std::string(ORDERBAND_BINARY) + " check " + toml);
    EXPECT_EQ(r.exit_code, 1) << expected;
    EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1) << r.err;
    EXPECT_NE(r.err.find(expected), std::string::npos) << r.err;
  };
  // The 48 × 48 px patterns declared 64 × 36 (the same bytes per pattern, so the size check passes).
  write_edited(scan, folder + "wide.toml", "width_px = 48\nheight_px = 48", "width_px = 64\nheight_px = 36");
  one_line_error(folder + "wide.toml", "the patterns look 48 x 48 px, not the declared 64 x 36");
  // A FIFO as the pattern file blocked check until something wrote to it.
  ASSERT_EQ(::mkfifo((folder + "fifo").c_str(), 0600), 0);
  write_edited(scan, folder + "fifo.toml", "'patterns.raw'", "'fifo'");
  one_line_error(folder + "fifo.toml", "fifo' is not a regular file (a pipe, socket or device)");
  // A folder as the pattern file was "4096 bytes, shorter than ...".
  std::filesystem::create_directories(folder + "stack");
  write_edited(scan, folder + "folder.toml", "'patterns.raw'", "'stack'");
  one_line_error(folder + "folder.toml", "stack' is a folder, not a pattern file");
  // The same CIF for both phases: map found no superlattice family after the orientations.
  const std::string cif = test::crystal_data("ni-gamma.cif");
  write_edited(scan, folder + "same.toml", "pair = 'ni'", "ordered = '" + cif + "'\ndisordered = '" + cif + "'");
  one_line_error(folder + "same.toml", "no plane family reaches superlattice sensitivity");
  // Reference regions that share points: map ended with "the ordered reference region is not above
  // the disordered one" after all the work.
  write_edited(scan, folder + "overlap.toml", "end_members = 'model'",
               "end_members = 'regions'\nordered_regions = [[0, 0, 3, 3]]\ndisordered_regions = [[2, 2, 5, 5]]");
  one_line_error(folder + "overlap.toml",
                 "[fraction] the ordered and disordered references share 4 points (first: row 2, col 2)");
  std::filesystem::remove_all(dir);
}

TEST(CliUsage, UnknownCommandsFoldersAndLongValuesGiveOneShortLine) {
  // An unknown command was reported as "A subcommand is required".
  auto r = test::run_orderband("frobnicate s.toml");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_EQ(r.err.rfind("orderband: error: unknown command 'frobnicate' (commands: families, check, synth, orient, "
                        "map, screen, sphere, demo; see --help)",
                        0),
            0u)
      << r.err;
  // A folder given as the scan description read as an empty file ("missing table [scan]").
  const std::string dir = test::make_temp_dir("usage");
  r = test::run_orderband("check " + dir);
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_EQ(r.err, "orderband check: error: '" + dir + "' is a folder, not a scan description file\n");
  // A 5,000-character value is not echoed whole: its start and end, and how much was left out.
  const std::string name = dir + "/" + std::string(5000 - dir.size() - 6, 'a') + ".toml";
  r = test::run_orderband("map " + name);
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_LT(r.err.size(), 500u);
  EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1) << r.err;
  EXPECT_NE(r.err.find("characters left out"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("aaa.toml' (missing or unreadable)"), std::string::npos) << r.err;
  std::filesystem::remove_all(dir);
}

}  // namespace orderband
