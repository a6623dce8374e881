// Synthetic patterns: bands where the geometry puts them, ordering only in superlattice bands,
// determinism across thread counts, scenario errors.
#include "orderband/synth.hpp"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "orderband/error.hpp"
#include "orderband/ordering_pair.hpp"
#include "orderband/pair_catalog.hpp"
#include "orderband/units.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

DetectorGeometrySpec geometry_spec() {
  DetectorGeometrySpec g;
  g.width_px = g.height_px = 60;
  g.pc_px = {30, 18};
  g.distance_px = 45;
  return g;
}

std::string slurp(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

TEST(SynthRender, BandCentresFollowTheGnomonicTraces) {
  // Noise-free pattern of fcc Ni {111} bands only, flat background: across each band the
  // intensity centroid must sit on the plane trace from the detector geometry (half a pixel).
  const Phase ni = load_phase_cif(test::crystal_data("ni-fcc.cif"));
  BandModelParams params;
  params.d_min_A = 2.0;  // {111} only
  params.edge_contrast = 0;
  const KinematicBandModel model(ni, 20, params);
  ASSERT_EQ(model.bands().size(), 4u);
  const DetectorGeometry geo(geometry_spec());
  const PatternRenderer renderer(geo, model, model, 1000, 0.0);
  const Rotation g = Rotation::from_bunge(deg_to_rad(20), deg_to_rad(35), deg_to_rad(50));
  std::vector<float> img(3600);
  renderer.expected({{g, false, 1.0, 0}}, geo, img.data());
  int checked = 0;
  for (const ModelBand& b : model.bands()) {
    const SampleDirection n = g.to_sample(CrystalDirection(b.normal));
    for (const PixelPoint& p : geo.trace(n, 0.0, 400)) {
      if (p.x < 6 || p.x > 54 || p.y < 6 || p.y > 54) continue;
      // Skip points near another band.
      bool crowded = false;
      for (const ModelBand& o : model.bands())
        if (&o != &b && std::abs(geo.direction_sample(p).dot(g.to_sample(CrystalDirection(o.normal)))) < 0.12)
          crowded = true;
      if (crowded) continue;
      // Profile along the image axis most perpendicular to the trace.
      const auto q = geo.trace(n, 0.0, 400);
      const Eigen::Vector3d dn = geo.to_detector(n).vec();
      const bool horizontal_profile = std::abs(dn.x()) > std::abs(dn.y());
      double s = 0, sw = 0;
      for (int k = -5; k <= 5; ++k) {
        const int j = horizontal_profile ? static_cast<int>(std::floor(p.x)) + k : static_cast<int>(std::floor(p.x));
        const int i = horizontal_profile ? static_cast<int>(std::floor(p.y)) : static_cast<int>(std::floor(p.y)) + k;
        const double w = img[i * 60 + j] / 1000.0 - 1.0;
        s += w * (horizontal_profile ? j + 0.5 : i + 0.5);
        sw += w;
      }
      // The centroid along the row through the pixel row of p, compared with the trace there.
      const double centre = s / sw;
      double expected;
      if (horizontal_profile) {
        // x of the trace at the row centre y = floor(p.y) + 0.5: interpolate the traced points.
        const double y = std::floor(p.y) + 0.5;
        double best = 1e9;
        expected = p.x;
        for (const PixelPoint& t : q)
          if (std::abs(t.y - y) < best && std::abs(t.x - p.x) < 3) best = std::abs(t.y - y), expected = t.x;
      } else {
        const double x = std::floor(p.x) + 0.5;
        double best = 1e9;
        expected = p.y;
        for (const PixelPoint& t : q)
          if (std::abs(t.x - x) < best && std::abs(t.y - p.y) < 3) best = std::abs(t.x - x), expected = t.y;
      }
      EXPECT_NEAR(centre, expected, 0.5);
      ++checked;
    }
  }
  EXPECT_GT(checked, 40);
}

TEST(SynthRender, OrderingShowsOnlyInSuperlatticeBands) {
  const OrderingPair pair = load_named_pair("ni");
  BandModelParams params;
  const KinematicBandModel ordered(pair.ordered, 20, params), disordered(pair.disordered, 20, params);
  const DetectorGeometry geo(geometry_spec());
  const double counts = 5000;
  const PatternRenderer renderer(geo, ordered, disordered, counts, 0.5);
  const std::vector<PairFamily> table = pair_family_table(pair, 20, params.d_min_A);
  for (const Rotation& g : random_rotations(5, 17)) {
    std::vector<float> a(3600), b(3600);
    renderer.expected({{g, true, 1.0, 0}}, geo, a.data());
    renderer.expected({{g, false, 1.0, 0}}, geo, b.data());
    int super_pixels = 0, big_in_super = 0;
    for (int q = 0; q < 3600; ++q) {
      const SampleDirection v = geo.pixel_direction(q % 60, q / 60);
      const Eigen::Vector3d c = g.to_crystal(v).vec();
      bool in_super = false;
      for (const PairFamily& f : table) {
        if (f.sensitivity < 0.5) continue;
        for (const CrystalDirection& n : f.family.normals)
          in_super = in_super || std::abs(std::asin(n.vec().dot(c))) < 1.8 * f.bragg_ordered_rad;
      }
      const double diff = a[q] - b[q], noise = std::sqrt(double(b[q]));
      if (in_super) {
        ++super_pixels;
        big_in_super += std::abs(diff) > 0.05 * noise;
      } else {
        // Outside every superlattice band the two phases differ by less than a third of the
        // Poisson noise at 5000 counts: fundamental bands carry no ordering signal.
        EXPECT_LT(std::abs(diff), noise / 3) << "pixel " << q;
      }
    }
    // Inside the superlattice bands the ordered phase is brighter in a visible share of pixels.
    EXPECT_GT(big_in_super, super_pixels / 4);
  }
}

TEST(SynthScan, DeterministicAcrossThreadCountsAndTruthIsConsistent) {
  const std::string dir = test::make_temp_dir("synth");
  std::ofstream(dir + "/s.toml")
      << "[scenario]\nseed = 7\n[scan]\nrows = 12\ncols = 10\nstep_um = 0.05\n"
         "[detector]\nwidth_px = 40\nheight_px = 40\npc_px = [20.0, 12.0]\ndistance_px = 30.0\n"
         "[grains]\ncount = 2\n[secondary]\narea_fraction = 0.3\ndistribution = \"fixed\"\n"
         "diameter_um = 0.15\n[tertiary]\nfraction = 0.05\n";
  const auto r1 = test::run_orderband("synth " + dir + "/s.toml -o " + dir + "/t1 --threads 1 --quiet");
  const auto r2 = test::run_orderband("synth " + dir + "/s.toml -o " + dir + "/t2 --threads 2 --quiet");
  ASSERT_EQ(r1.exit_code, 0) << r1.err;
  ASSERT_EQ(r2.exit_code, 0) << r2.err;
  for (const char* f : {"patterns.raw", "truth_fraction.npy", "truth_grains.npy"})
    EXPECT_TRUE(slurp(dir + "/t1/" + f) == slurp(dir + "/t2/" + f)) << f;
  // The CSV differs only in its provenance line (the command line names the thread count).
  auto body = [](std::string s) { return s.substr(s.find('\n') + 1); };
  EXPECT_EQ(body(slurp(dir + "/t1/truth_orientations.csv")), body(slurp(dir + "/t2/truth_orientations.csv")));
  EXPECT_EQ(slurp(dir + "/t1/patterns.raw").size(), 12u * 10 * 40 * 40 * 2);
  const auto truth = nlohmann::json::parse(slurp(dir + "/t1/truth.json"));
  const double sec = truth["classes"]["secondary"]["area_fraction"],
               ter = truth["classes"]["tertiary"]["area_fraction"];
  EXPECT_NEAR(ter, 0.05 * (1 - sec), 1e-12);
  EXPECT_NEAR(truth["ordered_area_fraction"].get<double>(), sec + ter, 1e-12);
  // The written scan is readable as it is.
  const auto check = test::run_orderband("check " + dir + "/t1/scan.toml --sample 8");
  EXPECT_EQ(check.exit_code, 0) << check.err;
  EXPECT_NE(check.out.find("12 rows x 10 cols"), std::string::npos);
  std::filesystem::remove_all(dir);
}

TEST(SynthScenario, OneClearLinePerProblem) {
  const std::string base =
      "[scan]\nrows = 4\ncols = 4\nstep_um = 0.05\n[detector]\nwidth_px = 40\nheight_px = 40\n"
      "pc_px = [20.0, 12.0]\ndistance_px = 30.0\n";
  auto error_of = [&](const std::string& extra) {
    try {
      parse_synth_scenario(base + extra, "/tmp/x/scenario.toml");
    } catch (const Error& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  EXPECT_EQ(error_of(""), "no error");
  EXPECT_NE(error_of("[secondary]\narea_fraction = 1.5\n").find("[secondary] area_fraction must be within [0, 1)"),
            std::string::npos);
  EXPECT_NE(error_of("[secondary]\narea_fraction = 0.2\ndistribution = \"fixed\"\ndiameter_um = -0.1\n")
                .find("[secondary] diameter_um must be a positive size in µm"),
            std::string::npos);
  EXPECT_NE(error_of("[phases]\nordered = \"nope.cif\"\ndisordered = \"nope2.cif\"\n").find("does not exist"),
            std::string::npos);
  EXPECT_NE(error_of("[tertiary]\nfraction = 2\n").find("[tertiary] fraction must be within [0, 1]"),
            std::string::npos);
  EXPECT_NE(error_of("[patterns]\ncounts = 5\n").find("unknown key 'counts' in [patterns]"), std::string::npos);
  EXPECT_NE(error_of("[primary]\narea_fraction = 0.1\nmedian_diameter_um = 0.5\n").find("count must be at least 2"),
            std::string::npos);
}

}  // namespace
}  // namespace orderband
