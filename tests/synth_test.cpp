// Synthetic patterns: bands where the geometry puts them, ordering only in superlattice bands,
// determinism across thread counts, scenario errors.
#include "orderband/synth.hpp"
#include "orderband/phase_cif.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "orderband/error.hpp"
#include "orderband/ordering_pair.hpp"
#include "orderband/pair_catalog.hpp"
#include "orderband/synth_scan.hpp"
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
    EXPECT_TRUE(test::read_file_bytes(dir + "/t1/" + f) == test::read_file_bytes(dir + "/t2/" + f)) << f;
  // The CSV differs only in its provenance line (the command line names the thread count).
  auto body = [](std::string s) { return s.substr(s.find('\n') + 1); };
  EXPECT_EQ(body(test::read_file_bytes(dir + "/t1/truth_orientations.csv")),
            body(test::read_file_bytes(dir + "/t2/truth_orientations.csv")));
  EXPECT_EQ(test::read_file_bytes(dir + "/t1/patterns.raw").size(), 12u * 10 * 40 * 40 * 2);
  const auto truth = nlohmann::json::parse(test::read_file_bytes(dir + "/t1/truth.json"));
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
  // 10,000,000 grains on 16 points ran for ever without progress.
  EXPECT_NE(error_of("[grains]\ncount = 10000000\n").find("[grains] count must be within [1, 16]"), std::string::npos);
  // Renderer variants.
  EXPECT_NE(error_of("[renderer]\nband_shape = \"square\"\n").find("[renderer] band_shape = \"square\" is not"),
            std::string::npos);
  EXPECT_NE(error_of("[renderer]\ndetector_gamma = 3\n").find("detector_gamma must be within [0.5, 2]"),
            std::string::npos);
  EXPECT_NE(error_of("[renderer]\nedge_asymmetry = nan\n").find("edge_asymmetry must be within [-1, 1]"),
            std::string::npos);
  EXPECT_NE(error_of("[renderer]\npc_error_px = [1, 2]\n").find("pc_error_px must be [x, y, distance]"),
            std::string::npos);
  EXPECT_NE(error_of("[renderer]\nbeam_elongation = 0.5\n").find("beam_elongation must be within [1, 10]"),
            std::string::npos);
  EXPECT_NE(error_of("[renderer]\nmisfit = 0.01\n").find("unknown key 'misfit' in [renderer]"), std::string::npos);
}

TEST(SynthVariants, BandShapesAndEdgeLines) {
  const Phase ni = load_phase_cif(test::crystal_data("ni-fcc.cif"));
  BandModelParams params;
  params.edge_contrast = 0;
  params.shape = BandShape::flat;
  const KinematicBandModel flat(ni, 20, params);
  EXPECT_DOUBLE_EQ(flat.profile(0.99), 1.0);
  EXPECT_DOUBLE_EQ(flat.profile(-1.01), 0.0);
  params.shape = BandShape::gaussian;
  const KinematicBandModel gauss(ni, 20, params);
  // The Gaussian band carries the flat band's integral, 2 (σ √(2π) = 0.8 · 2.5066 = 2.005), computed.
  double integral = 0;
  for (double u = -gauss.profile_reach(); u < gauss.profile_reach(); u += 1e-3) integral += 1e-3 * gauss.profile(u);
  EXPECT_NEAR(integral, 0.8 * std::sqrt(2 * M_PI), 1e-3);
  // The table the renderer uses agrees with the exact profile on both sides.
  for (double u : {-3.1, -1.0, -0.3, 0.0, 0.7, 2.2}) EXPECT_NEAR(gauss.profile_table(u), gauss.profile(u), 1e-5) << u;
  // Asymmetric edge lines: the side n·x > 0 carries (1 + a), the other (1 − a).
  params.shape = BandShape::soft;
  params.edge_contrast = 0.3;
  params.edge_asymmetry = 0.5;
  const KinematicBandModel asym(ni, 20, params);
  const double step = 0.5;  // tanh(0) at |u| = 1
  EXPECT_NEAR(asym.profile(1.0), step + 0.3 * 1.5, 1e-12);
  EXPECT_NEAR(asym.profile(-1.0), step + 0.3 * 0.5, 1e-12);
  EXPECT_NEAR(asym.profile_table(-1.0), asym.profile(-1.0), 1e-5);
}

std::vector<std::array<int, 3>> family_set(const KinematicBandModel& m) {
  std::vector<std::array<int, 3>> out;
  for (const ModelFamily& f : m.families()) out.push_back({f.hkl[0], f.hkl[1], f.hkl[2]});
  std::sort(out.begin(), out.end());
  return out;
}

TEST(SynthRender, BothPhasesCarryTheSameFamilies) {
  // Each phase's own d cut-off would give the Ni pair's γ (a = 3.585 Å) a {420} band at d =
  // 0.8016 Å that γ′ (3.572 Å, d = 0.7987 Å) lacks, hidden inside the {210} superlattice bands:
  // a phase difference of the model's making, four times the superlattice bands' Fisher d′.
  const BandModelParams params;
  const OrderingPair ni = load_named_pair("ni");
  const auto own_o = family_set(KinematicBandModel(ni.ordered, 20, params));
  const auto own_d = family_set(KinematicBandModel(ni.disordered, 20, params));
  EXPECT_NE(own_o, own_d);
  EXPECT_NE(std::find(own_d.begin(), own_d.end(), std::array<int, 3>{4, 2, 0}), own_d.end());
  EXPECT_EQ(std::find(own_o.begin(), own_o.end(), std::array<int, 3>{4, 2, 0}), own_o.end());
  for (const char* name : {"ni", "co", "feal"}) {
    const OrderingPair pair = load_named_pair(name);
    EXPECT_EQ(
        family_set(KinematicBandModel(pair.ordered, 20, params)),
        family_set(KinematicBandModel(pair.disordered, 20, with_families_of(params, pair.disordered, pair.ordered))))
        << name;
    for (double misfit : {-0.003, 0.003}) {  // the renderer's models, with the variant's misfit
      SynthScenario s;
      s.phases.pair_name = name;
      s.variant.lattice_misfit = misfit;
      const RenderModels m = render_models(s, pair);
      EXPECT_EQ(family_set(m.ordered), family_set(m.disordered)) << name << " misfit " << misfit;
      EXPECT_EQ(family_set(m.ordered), family_set(KinematicBandModel(pair.ordered, 20, params))) << name;
    }
  }
}

TEST(SynthVariants, RenderModelsApplyTheVariantToTheRightFamilies) {
  SynthScenario s;
  s.phases.pair_name = "ni";
  const OrderingPair pair = load_phases(s.phases);
  const RenderModels plain = render_models(s, pair);
  s.variant.ordered_fundamental_ratio = 0.8;
  s.variant.ordered_fundamental_edge_contrast = -0.2;
  s.variant.family_contrast_spread = 0.3;
  s.variant.family_contrast_seed = 3;
  const RenderModels varied = render_models(s, pair);
  {
    SynthScenario m;
    m.phases = s.phases;
    m.variant.lattice_misfit = 0.003;
    const RenderModels misfit = render_models(m, pair);
    // Lattice misfit: every d of the ordered phase grows by 0.3 %, the families stay the pair's.
    for (size_t f = 0; f < plain.ordered.families().size(); ++f) {
      ASSERT_EQ(plain.ordered.families()[f].hkl, misfit.ordered.families()[f].hkl);
      EXPECT_NEAR(misfit.ordered.families()[f].d_A / plain.ordered.families()[f].d_A, 1.003, 1e-9);
    }
    EXPECT_NEAR(misfit.disordered.families()[0].d_A, plain.disordered.families()[0].d_A, 1e-12);
  }
  std::vector<Eigen::Vector3i> superlattice;
  for (const PairFamily& f : pair_family_table(pair, s.kv, s.band.d_min_A))
    if (f.sensitivity >= 0.5) superlattice.push_back(f.family.hkl);
  int fundamentals = 0, supers = 0;
  for (size_t f = 0; f < varied.ordered.families().size(); ++f) {
    const ModelFamily& a = plain.ordered.families()[f];
    const ModelFamily& b = varied.ordered.families()[f];
    ASSERT_EQ(a.hkl, b.hkl);
    if (a.weight == 0) continue;
    // The same per-family factor in both phases (the disordered model's family of the same hkl).
    double factor = 0;
    for (size_t j = 0; j < varied.disordered.families().size(); ++j)
      if (varied.disordered.families()[j].hkl == a.hkl && plain.disordered.families()[j].weight > 0)
        factor = varied.disordered.families()[j].weight / plain.disordered.families()[j].weight;
    const bool super = std::find(superlattice.begin(), superlattice.end(), a.hkl) != superlattice.end();
    if (super) {
      ++supers;
      EXPECT_NEAR(b.edge_contrast, a.edge_contrast, 0);
      const double own = b.weight / a.weight;
      EXPECT_GE(own, 0.7 - 1e-9);
      EXPECT_LE(own, 1.3 + 1e-9);
    } else {
      ++fundamentals;
      ASSERT_GT(factor, 0) << a.hkl.transpose();
      EXPECT_NEAR(b.weight / a.weight, 0.8 * factor, 1e-9) << a.hkl.transpose();
      EXPECT_EQ(b.edge_contrast, -0.2);
    }
  }
  EXPECT_GE(fundamentals, 5);
  EXPECT_GE(supers, 5);
  s.variant.pc_error_px = {0.5, -0.4, 0.6};
  s.geometry = geometry_spec();
  const DetectorGeometrySpec g = render_geometry(s);
  EXPECT_DOUBLE_EQ(g.pc_px.x(), 30.5);
  EXPECT_DOUBLE_EQ(g.pc_px.y(), 17.6);
  EXPECT_DOUBLE_EQ(g.distance_px, 45.6);
}

TEST(SynthVariants, DetectorGammaAndBackgroundShapes) {
  // Without bands the expected counts are counts · B^gamma, B the background of mean 1.
  const Phase ni = load_phase_cif(test::crystal_data("ni-fcc.cif"));
  BandModelParams params;
  params.band_amplitude = 0;
  params.edge_contrast = 0;
  params.d_min_A = 2.0;
  const KinematicBandModel none(ni, 20, params);
  const DetectorGeometry geo(geometry_spec());
  const Rotation g = Rotation::from_bunge(0.1, 0.2, 0.3);
  for (BackgroundShape shape : {BackgroundShape::quadratic, BackgroundShape::gaussian, BackgroundShape::linear}) {
    const PatternRenderer linear(geo, none, none, 1000, 0.5, shape, 1.0),
        curved(geo, none, none, 1000, 0.5, shape, 1.2);
    std::vector<float> a(3600), b(3600);
    linear.expected({{g, false, 1.0, 0}}, geo, a.data());
    curved.expected({{g, false, 1.0, 0}}, geo, b.data());
    double mean = 0;
    for (size_t q = 0; q < a.size(); ++q) {
      mean += a[q] / 3600.0;
      EXPECT_NEAR(b[q], 1000 * std::pow(a[q] / 1000, 1.2), 1e-2);
    }
    EXPECT_NEAR(mean, 1000, 1e-2);
    // The falloff: the darkest pixel is about 1 − 0.5 of the brightest.
    const auto [lo, hi] = std::minmax_element(a.begin(), a.end());
    EXPECT_NEAR(*lo / *hi, 0.5, 0.06) << static_cast<int>(shape);
  }
  // Linear: a tilted plane, darker toward the bottom of the screen.
  const PatternRenderer tilted(geo, none, none, 1000, 0.5, BackgroundShape::linear, 1.0);
  EXPECT_GT(tilted.background()[30], tilted.background()[59 * 60 + 30]);
}

TEST(SynthVariants, ElongatedBeamFootprint) {
  // A beam 2.9 × longer along y_S samples the microstructure 2.9 × farther along the rows: at a
  // point 3σ_x from a particle along x it sees none of it, at 3σ_x along y it sees part of it.
  MicrostructureSpec m;
  m.width_um = m.height_um = 1;
  m.grain_count = 1;
  m.secondary.area_fraction = 0.02;
  m.secondary.size = SizeDistribution::fixed(0.2);
  m.seed = 5;
  const Microstructure micro(m);
  ASSERT_FALSE(micro.particles().empty());
  const Particle& q = micro.particles()[0];
  const double r = 0.5 * q.section_ecd_um(), sx = 0.01, sy = 0.029;
  ASSERT_GT(r, 0.02);
  auto ordered_share = [&](const Eigen::Vector2d& p) {
    double f = 0;
    for (const MixtureComponent& c : point_mixture(micro, p, sx, sy)) f += c.ordered ? c.weight : 0.0;
    return f;
  };
  const Eigen::Vector2d c = q.centre_um.head<2>();
  EXPECT_DOUBLE_EQ(ordered_share(c + Eigen::Vector2d(r + 0.035, 0)), 0.0);
  EXPECT_GT(ordered_share(c + Eigen::Vector2d(0, r + 0.035)), 0.05);
}

}  // namespace
}  // namespace orderband
