// Orientation stage on a synthetic scan with truth: finding, refinement accuracy, grains, CSV.
#include "orderband/orient.hpp"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <random>
#include <set>
#include <sstream>

#include "orderband/error.hpp"
#include "orderband/grains.hpp"
#include "orderband/npy_io.hpp"
#include "orderband/orientation_csv.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/synth.hpp"
#include "orderband/synth_scan.hpp"
#include "orderband/units.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

// One synthetic scan shared by the tests of this file (not the demo scenario): 40 × 40 points,
// 60 × 60 px, 5,000 counts per pixel (the demo's noise level), four grains, secondary γ′.
class OrientScan : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new std::string(test::make_temp_dir("orient"));
    std::ofstream(*dir_ + "/s.toml") << "[scenario]\nseed = 11\n[scan]\nrows = 40\ncols = 40\nstep_um = 0.03\n"
                                        "[detector]\nwidth_px = 60\nheight_px = 60\npc_px = [30.0, 18.0]\n"
                                        "distance_px = 45.0\n[patterns]\ncounts_per_px = 5000\n[grains]\ncount = 4\n"
                                        "[secondary]\narea_fraction = 0.3\ndistribution = \"lognormal\"\n"
                                        "median_diameter_um = 0.12\nsigma_ln = 0.2\n";
    write_synthetic_scan(read_synth_scenario(*dir_ + "/s.toml"), *dir_ + "/scan", "test");
    config_ = new ScanConfig(read_scan_config(*dir_ + "/scan/scan.toml"));
    results_ = new OrientationResults(orient_scan(read_scan_inputs(*config_)));
    std::ifstream in(*dir_ + "/scan/truth_orientations.csv");
    truth_ = new OrientationTable(read_orientation_csv(in, config_->grid, "truth"));
  }
  static void TearDownTestSuite() {
    std::filesystem::remove_all(*dir_);
    delete dir_, delete config_, delete results_, delete truth_;
  }
  static std::string* dir_;
  static ScanConfig* config_;
  static OrientationResults* results_;
  static OrientationTable* truth_;
};
std::string* OrientScan::dir_ = nullptr;
ScanConfig* OrientScan::config_ = nullptr;
OrientationResults* OrientScan::results_ = nullptr;
OrientationTable* OrientScan::truth_ = nullptr;

TEST_F(OrientScan, FindingAndRefinementAccuracy) {
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  std::vector<double> err;
  size_t usable = 0, within2 = 0;
  for (size_t k = 0; k < config_->grid.count(); ++k) {
    if (results_->status[k] == static_cast<uint8_t>(PointStatus::unusable_pattern)) continue;
    ++usable;
    if (!results_->orientation[k]) continue;
    const double e = rad_to_deg(cubic.misorientation_angle(*results_->orientation[k], *truth_->orientations[k]));
    err.push_back(e);
    within2 += e < 2;
  }
  EXPECT_GE(double(within2) / usable, 0.99);  // issue Step 5: ≥ 99 % within 2°
  std::sort(err.begin(), err.end());
  EXPECT_LT(err[err.size() / 2], 0.1);                          // median < 0.1°
  EXPECT_LT(err[static_cast<size_t>(0.95 * err.size())], 0.3);  // 95th percentile < 0.3°
}

TEST_F(OrientScan, OrientationsFromTheRowAboveAgreeWithIndexingEveryPoint) {
  // The default refines each point from the row above's orientations and indexes only where none
  // fits (OrientSpec::from_neighbours); indexing every point is the reference. Both refine to the
  // same optimum, within the refinement's convergence: measured largest difference 0.0022° over 1,600
  // points (the median error against the truth is 0.03°); 1,520 points came from the row above (the
  // first row and the points where a grain starts were indexed).
  OrientSpec every;
  every.from_neighbours = false;
  const OrientationResults indexed = orient_scan(read_scan_inputs(*config_), every);
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  size_t compared = 0, agree = 0, worse = 0;
  for (size_t k = 0; k < config_->grid.count(); ++k) {
    if (!indexed.orientation[k] || !results_->orientation[k]) continue;
    ++compared;
    // No point may fit its pattern worse than indexing makes it fit. (On the demo's 16 h trial a
    // poorly fitted boundary point above once lent its orientation: correlation 0.33 where indexing
    // gives 0.87. This scan, and six seeds of it with 12 grains, hold no such point with or without
    // the fix, so here the check holds the property, not the case; the three demo trials were
    // checked by hand: no point worse, one better by 0.36.)
    worse += results_->correlation[k] < indexed.correlation[k] - 0.005;
    agree += rad_to_deg(cubic.misorientation_angle(*indexed.orientation[k], *results_->orientation[k])) < 0.005;
  }
  EXPECT_EQ(indexed.points_from_neighbours, 0u);
  EXPECT_GE(compared, 0.99 * config_->grid.count());
  EXPECT_GE(agree, 0.995 * compared);
  EXPECT_EQ(worse, 0u);
  // Most points are refined from above: at least the grid less its first row and a grain start per
  // grain and row (4 grains, 40 rows).
  EXPECT_GE(results_->points_from_neighbours, config_->grid.count() - 40 - 4 * 40);
  EXPECT_EQ(results_->grains.count(), indexed.grains.count());
}

TEST_F(OrientScan, GrainsMatchTheTruth) {
  const NpyArray truth_grains = read_npy(*dir_ + "/scan/truth_grains.npy");
  const ScanGrid& grid = config_->grid;
  std::set<int> truth_ids(truth_grains.values.begin(), truth_grains.values.end());
  EXPECT_EQ(results_->grains.count(), static_cast<int>(truth_ids.size()));
  // Each truth grain maps to the found id most of its points carry; away from boundaries, all agree.
  std::map<int, std::map<int, int>> votes;
  for (size_t k = 0; k < grid.count(); ++k) votes[static_cast<int>(truth_grains.values[k])][results_->grains.id[k]]++;
  std::map<int, int> mapped;
  for (auto& [t, m] : votes)
    mapped[t] = std::max_element(m.begin(), m.end(), [](auto& a, auto& b) { return a.second < b.second; })->first;
  int inner = 0, agree = 0;
  for (size_t k = 0; k < grid.count(); ++k) {
    bool boundary = false;
    for (const GridPoint& nb : grid.neighbours(grid.point(k), 8))
      boundary = boundary || truth_grains.values[grid.index(nb)] != truth_grains.values[k];
    if (boundary) continue;
    ++inner;
    const bool same = results_->grains.id[k] == mapped[static_cast<int>(truth_grains.values[k])];
    agree += same;
    if (!same)
      ADD_FAILURE() << "point " << k << " in truth grain " << truth_grains.values[k] << " has grain "
                    << results_->grains.id[k] << ", status " << int(results_->status[k]);
  }
  EXPECT_EQ(agree, inner);
}

TEST_F(OrientScan, CsvRoundTripsExactlyAndReadOrientationsAreRefined) {
  const ScanGrid& grid = config_->grid;
  OrientationTable t;
  t.orientations = results_->orientation;
  t.phases.assign(grid.count(), "ni_gamma");
  std::ostringstream a;
  write_orientation_csv(a, grid, t);
  std::istringstream in(a.str());
  const OrientationTable back = read_orientation_csv(in, grid, "a.csv");
  std::ostringstream b;
  write_orientation_csv(b, grid, back);
  EXPECT_TRUE(a.str() == b.str());  // written, read and written again: the same text
  for (size_t k = 0; k < grid.count(); ++k)
    if (t.orientations[k]) {
      EXPECT_LT((back.orientations[k]->quaternion() - t.orientations[k]->quaternion()).norm(), 1e-11);
    }

  // Orientations read from a CSV, each off by 1° about a random axis, come back refined.
  const auto axes = random_rotations(grid.count(), 5);
  OrientationTable noisy;
  for (size_t k = 0; k < grid.count(); ++k)
    noisy.orientations.push_back(Rotation::from_axis_angle(axes[k].axis(), deg_to_rad(1.0)) * *truth_->orientations[k]);
  std::ostringstream os;
  write_orientation_csv(os, grid, noisy);
  std::ofstream(*dir_ + "/noisy.csv") << os.str();
  ScanConfig c = *config_;
  c.orientations.source = OrientationSourceKind::file;
  c.orientations.file = *dir_ + "/noisy.csv";
  const OrientationResults r = orient_scan(read_scan_inputs(c));
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  std::vector<double> err;
  for (size_t k = 0; k < grid.count(); ++k)
    if (r.orientation[k])
      err.push_back(rad_to_deg(cubic.misorientation_angle(*r.orientation[k], *truth_->orientations[k])));
  std::sort(err.begin(), err.end());
  EXPECT_GT(err.size(), grid.count() * 99 / 100);
  EXPECT_LT(err[err.size() / 2], 0.1);
}

TEST(KernelMeanOrientation, AveragesNoiseWithinTheGrainOnly) {
  // Two grains (left and right halves of a 20 × 20 grid, 40° apart), each point's orientation
  // off its grain's by a random rotation of σ = 0.05° per axis and given as a random symmetric
  // variant. The 5 × 5 kernel mean divides the error by about √25 = 5 inside a grain and never
  // mixes the two grains at their boundary.
  ScanGrid grid;
  grid.rows = grid.cols = 20;
  grid.step_um = 0.1;
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  const Rotation a = Rotation::from_bunge(0.3, 0.7, 1.1);
  const Rotation b = Rotation::from_axis_angle(Eigen::Vector3d(1, 2, 5).normalized(), deg_to_rad(40)) * a;
  std::mt19937_64 rng(3);
  std::normal_distribution<double> noise(0, deg_to_rad(0.05));
  std::uniform_int_distribution<int> variant(0, 23);
  std::vector<Rotation> ops;  // the 24 proper signed permutation matrices
  const int perms[6][3] = {{0, 1, 2}, {1, 2, 0}, {2, 0, 1}, {0, 2, 1}, {2, 1, 0}, {1, 0, 2}};
  for (const auto& p : perms)
    for (int signs = 0; signs < 8; ++signs) {
      Eigen::Matrix3d m = Eigen::Matrix3d::Zero();
      for (int i = 0; i < 3; ++i) m(i, p[i]) = (signs >> i & 1) ? -1.0 : 1.0;
      if (m.determinant() > 0) ops.push_back(Rotation::from_matrix(m));
    }
  ASSERT_EQ(ops.size(), 24u);
  std::vector<std::optional<Rotation>> ori(grid.count());
  std::vector<Rotation> truth(grid.count());
  for (size_t k = 0; k < grid.count(); ++k) {
    truth[k] = grid.point(k).col < 10 ? a : b;
    const Eigen::Vector3d v(noise(rng), noise(rng), noise(rng));
    ori[k] = ops[variant(rng)] * Rotation::from_axis_angle(v, v.norm()) * truth[k];
  }
  const GrainMap grains = segment_grains(grid, ori, cubic);
  ASSERT_EQ(grains.count(), 2);
  const auto smooth = kernel_mean_orientations(grid, ori, grains, cubic, 2);
  double before = 0, after = 0, worst_edge = 0;
  int inner = 0;
  for (size_t k = 0; k < grid.count(); ++k) {
    const GridPoint p = grid.point(k);
    const double e0 = rad_to_deg(cubic.misorientation_angle(*ori[k], truth[k]));
    const double e1 = rad_to_deg(cubic.misorientation_angle(*smooth[k], truth[k]));
    worst_edge = std::max(worst_edge, e1);  // a kernel reaching across the boundary would be ~8° off
    if (p.row < 2 || p.row > 17 || p.col < 2 || p.col > 17 || p.col == 8 || p.col == 9 || p.col == 10 || p.col == 11)
      continue;
    before += e0 * e0, after += e1 * e1, ++inner;
  }
  const double ratio = std::sqrt(after / before);
  EXPECT_NEAR(ratio, 0.2, 0.05);  // 1/√25 for independent errors
  EXPECT_LT(worst_edge, 0.1);
}

TEST(OrientationCsv, RejectsBadTables) {
  const ScanGrid grid{GridKind::square, 1, 2, 0.1};
  auto error_of = [&](const std::string& text) {
    std::istringstream in(text);
    try {
      read_orientation_csv(in, grid, "o.csv");
    } catch (const Error& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  const std::string header = "row,col,phi1_deg,Phi_deg,phi2_deg,phase\n";
  EXPECT_EQ(error_of(header + "0,0,10,20,30,g\n0,1,,,,\n"), "no error");
  EXPECT_NE(error_of(header + "0,0,10,20,30,g\n").find("1 orientations for 2 scan points"), std::string::npos);
  EXPECT_NE(error_of(header + "0,1,10,20,30,g\n0,0,1,2,3,g\n").find("o.csv:2: expected row 0, col 0"),
            std::string::npos);
  EXPECT_NE(error_of(header + "0,0,10,200,30,g\n0,1,1,2,3,g\n").find("out of range"), std::string::npos);
  EXPECT_NE(error_of(header + "0,0,ten,20,30,g\n0,1,1,2,3,g\n").find("'ten' is not a number"), std::string::npos);
  EXPECT_NE(error_of("a,b,c\n").find("header must be"), std::string::npos);
}

TEST(OrientationCsv, RadiansAreRecognised) {
  // 24 random orientations written in radians: every angle passes the degree range check, and
  // each point would then be refined from a wrong start. The table is refused as a whole; the same
  // orientations in degrees are read.
  const ScanGrid grid{GridKind::square, 4, 6, 0.1};
  std::ostringstream radians, degrees;
  radians << "row,col,phi1_deg,Phi_deg,phi2_deg\n";
  degrees << "row,col,phi1_deg,Phi_deg,phi2_deg\n";
  const auto rotations = random_rotations(grid.count(), 5);
  for (size_t k = 0; k < grid.count(); ++k) {
    const GridPoint p = grid.point(k);
    const Eigen::Vector3d e = rotations[k].bunge();
    radians << p.row << "," << p.col << "," << e[0] << "," << e[1] << "," << e[2] << "\n";
    degrees << p.row << "," << p.col << "," << rad_to_deg(e[0]) << "," << rad_to_deg(e[1]) << "," << rad_to_deg(e[2])
            << "\n";
  }
  std::istringstream in_radians(radians.str()), in_degrees(degrees.str());
  try {
    read_orientation_csv(in_radians, grid, "o.csv");
    ADD_FAILURE() << "radians accepted";
  } catch (const Error& e) {
    EXPECT_NE(std::string(e.what()).find("look like radians"), std::string::npos) << e.what();
  }
  EXPECT_EQ(read_orientation_csv(in_degrees, grid, "o.csv").orientations.size(), grid.count());
}

}  // namespace
}  // namespace orderband
