// Rotations: conventions of Rowenhorst et al. 2015, scipy cross-checks, cubic misorientation statistics.
#include "orderband/rotation.hpp"
#include "orderband/phase_cif.hpp"

#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "orderband/error.hpp"
#include "orderband/laue_group.hpp"
#include "orderband/units.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

Rotation bunge_deg(double a, double b, double c) {
  return Rotation::from_bunge(deg_to_rad(a), deg_to_rad(b), deg_to_rad(c));
}

TEST(Rotation, WorkedValuesOfThePassiveConvention) {
  // Passive, Bunge ZXZ, P = -1 (Rowenhorst et al., Modelling Simul. Mater. Sci. Eng. 23 (2015)
  // 083501); the numbers were computed from its formulas while planning.
  const Rotation a = bunge_deg(90, 0, 0);
  EXPECT_NEAR((a.quaternion() - Eigen::Vector4d(0.707107, 0, 0, 0.707107)).norm(), 0, 1e-6);
  Eigen::Matrix3d ga;
  ga << 0, 1, 0, -1, 0, 0, 0, 0, 1;
  EXPECT_NEAR((a.matrix() - ga).norm(), 0, 1e-12);
  // Passive: the sample x axis has crystal coordinates (0, -1, 0) after phi1 = 90 deg.
  EXPECT_NEAR((a.to_crystal(SampleDirection({1, 0, 0})).vec() - Eigen::Vector3d(0, -1, 0)).norm(), 0, 1e-12);

  const Rotation b = bunge_deg(30, 45, 60);
  EXPECT_NEAR((b.quaternion() - Eigen::Vector4d(0.653281, 0.369644, -0.099046, 0.653281)).norm(), 0, 2e-6);
  EXPECT_NEAR(rad_to_deg(b.angle()), 98.4211, 1e-4);
  EXPECT_NEAR((b.axis() - Eigen::Vector3d(0.488227, -0.130820, 0.862856)).norm(), 0, 2e-6);
  Eigen::Matrix3d gb;
  gb << 0.126826, 0.780330, 0.612372, -0.926777, -0.126826, 0.353553, 0.353553, -0.612372, 0.707107;
  EXPECT_NEAR((b.matrix() - gb).cwiseAbs().maxCoeff(), 0, 1e-6);
  EXPECT_NEAR(rad_to_deg(bunge_deg(10, 20, 30).angle()), 44.5375, 1e-4);
}

TEST(Rotation, RoundTripsTo1e12) {
  for (const Rotation& r : random_rotations(2000, 7)) {
    const Eigen::Vector3d e = r.bunge();
    EXPECT_NEAR((Rotation::from_bunge(e[0], e[1], e[2]).quaternion() - r.quaternion()).norm(), 0, 1e-12);
    EXPECT_NEAR((Rotation::from_matrix(r.matrix()).quaternion() - r.quaternion()).norm(), 0, 1e-12);
    EXPECT_NEAR((Rotation::from_axis_angle(r.axis(), r.angle()).quaternion() - r.quaternion()).norm(), 0, 1e-12);
    EXPECT_GE(r.quaternion()[0], 0);
    EXPECT_NEAR(r.matrix().determinant(), 1, 1e-12);
  }
  // Degenerate Euler angles: Phi = 0 and Phi = 180 deg.
  for (const Rotation& r : {bunge_deg(37, 0, 0), bunge_deg(37, 180, 0), bunge_deg(0, 0, 0)}) {
    const Eigen::Vector3d e = r.bunge();
    EXPECT_NEAR((Rotation::from_bunge(e[0], e[1], e[2]).matrix() - r.matrix()).norm(), 0, 1e-12);
  }
}

TEST(Rotation, CompositionHasMatrixSemantics) {
  const auto rs = random_rotations(50, 3);
  for (size_t i = 0; i + 1 < rs.size(); ++i) {
    EXPECT_NEAR(((rs[i] * rs[i + 1]).matrix() - rs[i].matrix() * rs[i + 1].matrix()).norm(), 0, 1e-12);
    EXPECT_NEAR((rs[i] * rs[i].inverse()).angle(), 0, 1e-7);
  }
}

TEST(Rotation, AgreesWithScipy) {
  // Independent implementation: scipy.spatial.transform.Rotation (tests/reference/rotation_reference.py).
  const std::string dir = test::make_temp_dir("rot");
  const std::string in = dir + "/in.txt";
  std::ofstream f(in);
  f.precision(17);
  std::vector<Eigen::Vector3d> eulers;
  for (const Rotation& r : random_rotations(40, 11)) eulers.push_back(r.bunge() * 180 / kPi);
  eulers.push_back({30, 45, 60});
  eulers.push_back({90, 0, 0});
  for (const auto& e : eulers) f << "E " << e[0] << ' ' << e[1] << ' ' << e[2] << '\n';
  const auto pairs = random_rotations(40, 12);
  for (size_t i = 0; i + 1 < pairs.size(); i += 2) {
    const Eigen::Vector3d a = pairs[i].bunge() * 180 / kPi, b = pairs[i + 1].bunge() * 180 / kPi;
    f << "M " << a[0] << ' ' << a[1] << ' ' << a[2] << ' ' << b[0] << ' ' << b[1] << ' ' << b[2] << '\n';
  }
  f.close();
  const auto r = test::run_reference_script("rotation_reference.py", in);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::istringstream out(r.out);
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  for (const auto& e : eulers) {
    Eigen::Vector4d q;
    Eigen::Matrix<double, 9, 1> g;
    for (int i = 0; i < 4; ++i) out >> q[i];
    for (int i = 0; i < 9; ++i) out >> g[i];
    const Rotation mine = bunge_deg(e[0], e[1], e[2]);
    EXPECT_NEAR((mine.quaternion() - q).norm(), 0, 1e-9);
    const Eigen::Matrix3d gm = mine.matrix();
    for (int i = 0; i < 9; ++i) EXPECT_NEAR(gm(i / 3, i % 3), g[i], 1e-9);
  }
  for (size_t i = 0; i + 1 < pairs.size(); i += 2) {
    double angle_deg;
    out >> angle_deg;
    const Eigen::Vector3d a = pairs[i].bunge() * 180 / kPi, b = pairs[i + 1].bunge() * 180 / kPi;
    EXPECT_NEAR(rad_to_deg(cubic.misorientation_angle(bunge_deg(a[0], a[1], a[2]), bunge_deg(b[0], b[1], b[2]))),
                angle_deg, 1e-6);
  }
  std::filesystem::remove_all(dir);
}

TEST(CrystalSymmetry, CubicFromTheCifEqualsTheBuiltInSet) {
  const CrystalSymmetry from_cif(laue_rotations(load_phase_cif(test::crystal_data("ni-fcc.cif"))));
  const CrystalSymmetry built_in = CrystalSymmetry::cubic();
  ASSERT_EQ(from_cif.size(), 24u);
  for (const Rotation& s : from_cif.operators()) {
    double best = 0;
    for (const Rotation& t : built_in.operators()) best = std::max(best, std::abs(s.quaternion().dot(t.quaternion())));
    EXPECT_NEAR(best, 1, 1e-12);
  }
}

TEST(CrystalSymmetry, MackenzieDistributionOfRandomCubicMisorientations) {
  // Mackenzie, Biometrika 45 (1958) 229 (citation from memory): the largest cubic misorientation
  // is 62.8 deg. Below 45 deg (the first boundary of the cubic fundamental zone) the density is
  // exactly 24 (1 - cos w) / pi: 24 symmetric copies of the uniform rotation-angle density
  // (1 - cos w)/pi (Handscomb, Canad. J. Math. 10 (1958) 85; computed).
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  const size_t n = 40000;
  const auto a = random_rotations(n, 101), b = random_rotations(n, 202);
  const int bins = 9;  // 5 deg bins over [0, 45)
  std::vector<double> counts(bins, 0.0);
  double max_deg = 0, sum_deg = 0, above55 = 0;
  for (size_t i = 0; i < n; ++i) {
    const double w = rad_to_deg(cubic.misorientation_angle(a[i], b[i]));
    max_deg = std::max(max_deg, w);
    sum_deg += w;
    above55 += w > 55;
    if (w < 45) counts[static_cast<int>(w / 5)] += 1;
  }
  EXPECT_LE(max_deg, 62.81);
  EXPECT_GT(max_deg, 60.0);  // the tail is populated
  double chi2 = 0;
  for (int k = 0; k < bins; ++k) {
    const double lo = deg_to_rad(5.0 * k), hi = deg_to_rad(5.0 * (k + 1));
    const double expected = n * 24 / kPi * ((hi - std::sin(hi)) - (lo - std::sin(lo)));
    chi2 += (counts[k] - expected) * (counts[k] - expected) / expected;
  }
  EXPECT_LT(chi2, 27.9);  // chi-square, 9 degrees of freedom, p = 0.001
  // Whole distribution against scipy's own random sample (independent code and random numbers).
  const std::string dir = test::make_temp_dir("mack");
  std::ofstream(dir + "/in.txt") << "R 20000 5\n";
  const auto r = test::run_reference_script("rotation_reference.py", dir + "/in.txt");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  double ref_mean, ref_above55;
  std::istringstream(r.out) >> ref_mean >> ref_above55;
  // Standard deviation of the distribution is about 10 deg: standard errors 0.05 and 0.07 deg.
  EXPECT_NEAR(sum_deg / n, ref_mean, 0.35);
  EXPECT_NEAR(above55 / n, ref_above55, 0.012);
  std::filesystem::remove_all(dir);
}

TEST(CrystalSymmetry, ReductionAndMean) {
  const CrystalSymmetry cubic = CrystalSymmetry::cubic();
  const Rotation g = bunge_deg(200, 130, 300);
  const Rotation fz = cubic.reduce(g);
  EXPECT_LE(rad_to_deg(fz.angle()), 62.81);
  EXPECT_NEAR(cubic.misorientation_angle(g, fz), 0, 1e-7);
  for (const Rotation& s : cubic.operators()) EXPECT_LE(fz.angle(), (s * g).angle() + 1e-12);
  // Mean of a scattered cluster given through random symmetric equivalents.
  const Rotation centre = bunge_deg(40, 30, 20);
  std::vector<Rotation> set;
  const auto noise = random_rotations(200, 9);
  for (size_t i = 0; i < noise.size(); ++i) {
    const Rotation small = Rotation::from_axis_angle(noise[i].axis(), deg_to_rad(1.0));
    set.push_back(cubic.operators()[i % 24] * (small * centre));
  }
  EXPECT_LT(rad_to_deg(cubic.misorientation_angle(cubic.mean(set), centre)), 0.2);
  EXPECT_THROW(cubic.mean({}), Error);
}

}  // namespace
}  // namespace orderband
