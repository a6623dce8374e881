// Ordered fraction on synthetic scans with truth (none of them the demo scenario).
#include "orderband/ordered_fraction.hpp"

#include <gtest/gtest.h>

#include <array>
#include <filesystem>
#include <fstream>
#include <functional>
#include <map>
#include <nlohmann/json.hpp>

#include "orderband/dynamical_sphere.hpp"
#include "orderband/npy_io.hpp"
#include "orderband/pair_catalog.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/sphere_file.hpp"
#include "orderband/synth.hpp"
#include "orderband/synth_scan.hpp"
#include "orderband/version.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

struct ScenarioRun {
  ScanConfig config;
  OrientationResults orientations;
  FractionResults fraction;
  std::vector<float> truth;
  std::vector<int> truth_grain;
  nlohmann::json truth_json;
};

/// Synthesises a scan from scenario text, then runs the orientation and fraction stages.
/// `also` runs on the result while the scan's files still exist.
ScenarioRun run_scenario(const std::string& scenario, double neighbour_sigma = 0, bool truth_orientations = false,
                         const std::function<void(ScenarioRun&)>& also = {}, const FractionSpec& spec = {}) {
  const std::string dir = test::make_temp_dir("fraction");
  std::ofstream(dir + "/s.toml") << scenario;
  write_synthetic_scan(read_synth_scenario(dir + "/s.toml"), dir + "/scan", "test");
  ScenarioRun r;
  r.config = read_scan_config(dir + "/scan/scan.toml");
  r.config.preprocess.neighbour_sigma_steps = neighbour_sigma;
  if (truth_orientations) {  // orientations indexed elsewhere, brought as a CSV and used as they are
    r.config.orientations.source = OrientationSourceKind::file;
    r.config.orientations.file = dir + "/scan/truth_orientations.csv";
    r.config.orientations.refine = false;
  }
  r.orientations = orient_scan(read_scan_inputs(r.config));
  r.fraction = ordered_fraction_scan(read_scan_inputs(r.config), r.orientations, spec);
  r.truth = read_npy(dir + "/scan/truth_fraction.npy").values;
  for (float g : read_npy(dir + "/scan/truth_grains.npy").values) r.truth_grain.push_back(static_cast<int>(g));
  std::ifstream in(dir + "/scan/truth.json");
  r.truth_json = nlohmann::json::parse(in);
  if (also) also(r);
  std::filesystem::remove_all(dir);
  return r;
}

std::string scenario(const std::string& extra, int side = 40, double counts = 5000, const std::string& pair = "ni") {
  return "[scenario]\nseed = 21\n[scan]\nrows = " + std::to_string(side) + "\ncols = " + std::to_string(side) +
         "\nstep_um = 0.025\n[detector]\nwidth_px = 60\nheight_px = 60\npc_px = [30.0, 18.0]\ndistance_px = 45.0\n"
         "[phases]\npair = \"" +
         pair + "\"\n[patterns]\ncounts_per_px = " + std::to_string(counts) + "\n" + extra;
}

const std::string kSecondary =
    "[grains]\ncount = 3\n[secondary]\narea_fraction = 0.3\ndistribution = \"lognormal\"\nmedian_diameter_um = 0.15\n"
    "sigma_ln = 0.2\n";

/// Share of points more than one step from a phase boundary classified right (f ≥ 0.5 vs truth ≥ 0.5).
double classification(const ScenarioRun& r) {
  const ScanGrid& grid = r.config.grid;
  size_t inner = 0, correct = 0;
  for (size_t k = 0; k < grid.count(); ++k) {
    if (r.fraction.reason[k]) continue;
    const bool t = r.truth[k] >= 0.5;
    bool boundary = false;
    for (const GridPoint& nb : grid.neighbours(grid.point(k), 8))
      boundary = boundary || ((r.truth[grid.index(nb)] >= 0.5) != t);
    if (boundary) continue;
    ++inner;
    correct += (r.fraction.fraction[k] >= 0.5) == t;
  }
  return double(correct) / inner;
}

/// The mean f of the matrix points (truth ≤ 0.02) with a point of another true grain among their 8
/// neighbours: where the beam also sees another lattice.
double boundary_matrix_mean(const ScenarioRun& r) {
  const ScanGrid& grid = r.config.grid;
  double sum = 0, count = 0;
  for (size_t k = 0; k < grid.count(); ++k) {
    if (r.fraction.reason[k] || r.truth[k] > 0.02) continue;
    bool boundary = false;
    for (const GridPoint& nb : grid.neighbours(grid.point(k), 8))
      boundary = boundary || r.truth_grain[grid.index(nb)] != r.truth_grain[k];
    if (boundary) sum += r.fraction.raw[k], count += 1;
  }
  return count > 0 ? sum / count : std::nan("");
}

double truth_mean(const ScenarioRun& r) {
  double s = 0;
  for (float v : r.truth) s += v;
  return s / r.truth.size();
}

/// The truth's mean over the points the fraction stage measured (a sliver of a grain at the field's
/// edge is not placed, `grain_too_small`), which is what mean_raw() averages over.
double measured_truth_mean(const ScenarioRun& r) {
  double truth = 0, measured = 0;
  for (size_t k = 0; k < r.truth.size(); ++k)
    if (!r.fraction.reason[k]) truth += r.truth[k], measured += 1;
  return truth / measured;
}

TEST(OrderedFraction, ClassifiesPointsAndAreaFractionAt5000Counts) {
  const ScenarioRun r = run_scenario(scenario(kSecondary));
  EXPECT_EQ(r.fraction.measured(), r.config.grid.count());
  // ≥ 95 % (issue Wave 2 · A). Wave 1 asked 97 %, reached only while γ's model carried a {420}
  // band that γ′'s lacked (band_model.hpp, with_families_of); without it one point's patterns
  // separate the phases at d′ ≈ 9.7 (Fisher, this geometry) and the estimator reaches about 3.5,
  // an expected 4 % of points on the wrong side.
  EXPECT_GE(classification(r), 0.95);
  EXPECT_NEAR(r.fraction.mean_raw(), truth_mean(r), 0.02);  // area fraction within ±0.02
  // Pure points land on the model's 0 and 1 (the estimate is linear in the phase mixture, so their
  // means carry no selection bias); the superlattice families carry the weight.
  double pure_sum[2] = {0, 0}, pure_n[2] = {0, 0};
  for (size_t k = 0; k < r.truth.size(); ++k)
    if (r.truth[k] == 0.0f || r.truth[k] == 1.0f)
      pure_sum[r.truth[k] == 1.0f] += r.fraction.raw[k], ++pure_n[r.truth[k] == 1.0f];
  ASSERT_GT(pure_n[0], 100);
  ASSERT_GT(pure_n[1], 50);
  EXPECT_NEAR(pure_sum[0] / pure_n[0], 0.0, 0.03);
  EXPECT_NEAR(pure_sum[1] / pure_n[1], 1.0, 0.06);
  double super_weight = 0;
  for (const auto& f : r.fraction.families)
    if (f.superlattice)
      super_weight += f.weight;
    else
      EXPECT_EQ(f.weight, 0.0);
  EXPECT_NEAR(super_weight, 1.0, 1e-9);
  // Per-point uncertainties describe the scatter of the pure-γ points.
  double s = 0, s2 = 0, u = 0;
  int n = 0;
  for (size_t k = 0; k < r.truth.size(); ++k)
    if (r.truth[k] == 0.0f)
      s += r.fraction.raw[k], s2 += r.fraction.raw[k] * r.fraction.raw[k], u += r.fraction.uncertainty[k], ++n;
  const double sd = std::sqrt(s2 / n - (s / n) * (s / n));
  EXPECT_NEAR(u / n / sd, 1.0, 0.35);
}

TEST(OrderedFraction, ReferenceRegionsSetTheEndMembers) {
  // End members from user regions: a 3 × 3 block inside a particle and a 6 × 6 block of matrix
  // (both from the truth map) become 1 and 0; the area fraction stays within ±0.03 of the truth.
  run_scenario(scenario(kSecondary), 0, false, [](ScenarioRun& r) {
    const ScanGrid& g = r.config.grid;
    auto block_of = [&](int size, bool ordered) {
      for (int i = 0; i + size <= g.rows; ++i)
        for (int j = 0; j + size <= g.cols; ++j) {
          bool all = true;
          for (int a = 0; a < size; ++a)
            for (int b = 0; b < size; ++b) all = all && (r.truth[g.index({i + a, j + b})] == (ordered ? 1.0f : 0.0f));
          if (all) return PointRect{i, j, i + size - 1, j + size - 1};
        }
      return PointRect{-1, -1, -1, -1};
    };
    FractionSpec spec;
    spec.end_members = EndMemberMode::regions;
    spec.ordered_regions = {block_of(3, true)};
    spec.disordered_regions = {block_of(6, false)};
    ASSERT_GE(spec.ordered_regions[0].row0, 0);
    ASSERT_GE(spec.disordered_regions[0].row0, 0);
    const FractionResults f = ordered_fraction_scan(read_scan_inputs(r.config), r.orientations, spec);
    double in_ordered = 0, in_disordered = 0;
    int n1 = 0, n0 = 0;
    for (size_t k = 0; k < g.count(); ++k) {
      if (spec.ordered_regions[0].contains(g.point(k))) in_ordered += f.raw[k], ++n1;
      if (spec.disordered_regions[0].contains(g.point(k))) in_disordered += f.raw[k], ++n0;
    }
    EXPECT_NEAR(in_ordered / n1, 1.0, 1e-5);
    EXPECT_NEAR(in_disordered / n0, 0.0, 1e-5);
    EXPECT_NEAR(f.mean_raw(), truth_mean(r), 0.03);
    // The same regions given as point masks (as read from a mask file) set the same end members.
    FractionSpec by_mask = spec;
    by_mask.ordered_regions.clear(), by_mask.disordered_regions.clear();
    by_mask.ordered_mask.assign(g.count(), 0), by_mask.disordered_mask.assign(g.count(), 0);
    for (size_t k = 0; k < g.count(); ++k) {
      by_mask.ordered_mask[k] = spec.ordered_regions[0].contains(g.point(k));
      by_mask.disordered_mask[k] = spec.disordered_regions[0].contains(g.point(k));
    }
    const FractionResults m = ordered_fraction_scan(read_scan_inputs(r.config), r.orientations, by_mask);
    EXPECT_DOUBLE_EQ(m.calibration_offset, f.calibration_offset);
    EXPECT_DOUBLE_EQ(m.calibration_scale, f.calibration_scale);
  });
}

TEST(OrderedFraction, LowCountsWithNeighbourAveraging) {
  // 1,000 counts per pixel, Gaussian neighbour averaging σ = 0.8 steps over the 3 × 3 neighbourhood.
  const ScenarioRun r = run_scenario(scenario(kSecondary, 40, 1000), 0.8);
  EXPECT_GE(classification(r), 0.90);  // issue Step 6: ≥ 90 %
}

TEST(OrderedFraction, SubResolutionTertiaryFraction) {
  const ScenarioRun r = run_scenario(scenario(kSecondary + "[tertiary]\nfraction = 0.06\n", 48));
  EXPECT_NEAR(r.fraction.subresolution_fraction, 0.06, 0.02);  // issue Step 6: within ±0.02
  // Its standard error: per-point spread about 0.28 (one pattern separates the phases at d′ ≈ 3.5)
  // over some 700 matrix points away from particles, correlated within 4 × 4 blocks by the beam.
  EXPECT_LT(r.fraction.subresolution_se, 0.015);
  EXPECT_GT(r.fraction.subresolution_se, 0.005);
  EXPECT_NEAR(r.fraction.mean_raw(), truth_mean(r), 0.02);
}

TEST(OrderedFraction, NoOrientationBiasPureGammaGrainsAndAPrimaryParticle) {
  // Four pure-γ grains of different orientations and one primary γ′ particle with its own orientation.
  const ScenarioRun r =
      run_scenario(scenario("[grains]\ncount = 4\n[primary]\narea_fraction = 0.08\ndistribution = \"fixed\"\n"
                            "diameter_um = 0.45\nown_orientation = true\n",
                            40));
  std::map<int, std::pair<double, int>> by_grain;
  for (size_t k = 0; k < r.truth.size(); ++k) {
    // Points of one phase only (the beam at a particle's edge sees both, and rightly so).
    if (r.fraction.reason[k] || (r.truth[k] != 0.0f && r.truth[k] != 1.0f)) continue;
    auto& a = by_grain[r.truth_grain[k]];
    a.first += r.fraction.raw[k], a.second += 1;  // unclipped: clipping would bias a noisy mean upward
  }
  int gamma_grains = 0, primaries = 0;
  for (const auto& [g, a] : by_grain) {
    if (a.second < 30) continue;  // too few points for a meaningful mean
    const double mean = a.first / a.second;
    if (g < 4) {  // pure γ grains
      // Issue Step 6: each pure-γ grain's mean f below 0.05 (|mean| < 0.01 measured here and in
      // bench/orientation_bias_bench over 12 grains), boundary points included.
      EXPECT_LT(std::abs(mean), 0.05) << "grain " << g;
      ++gamma_grains;
    } else {  // the primary γ′ particle
      EXPECT_GT(mean, 0.9) << "primary particle " << g;
      ++primaries;
    }
  }
  EXPECT_GE(gamma_grains, 2);
  EXPECT_GE(primaries, 1);
}

TEST(OrderedFraction, PatternCentreErrorIsRefinedAway) {
  // The scan description's pattern centre off by (+0.4, −0.3) px and its distance by +0.5 px
  // (about 1 % of the screen: a plausible calibration error). The fraction stage refines them
  // from the grains' mean patterns back to the geometry the patterns were made with, and the area
  // fraction stays within ±0.02 of the truth.
  const std::string dir = test::make_temp_dir("fraction-pc");
  std::ofstream(dir + "/s.toml") << scenario(
      "[grains]\ncount = 6\n[secondary]\narea_fraction = 0.3\ndistribution = \"lognormal\"\n"
      "median_diameter_um = 0.15\nsigma_ln = 0.2\n",
      40);
  write_synthetic_scan(read_synth_scenario(dir + "/s.toml"), dir + "/scan", "test");
  ScanConfig config = read_scan_config(dir + "/scan/scan.toml");
  const DetectorGeometrySpec truth = config.geometry;
  config.geometry.pc_px += Eigen::Vector2d(0.4, -0.3);
  config.geometry.distance_px += 0.5;
  const OrientationResults ori = orient_scan(read_scan_inputs(config));
  const FractionResults f = ordered_fraction_scan(read_scan_inputs(config), ori);
  EXPECT_TRUE(f.pattern_centre_refined);
  EXPECT_GE(f.pattern_centre_grains, 3);
  EXPECT_NEAR(f.geometry.pc_px.x(), truth.pc_px.x(), 0.1);
  EXPECT_NEAR(f.geometry.pc_px.y(), truth.pc_px.y(), 0.1);
  EXPECT_NEAR(f.geometry.distance_px, truth.distance_px, 0.1);
  EXPECT_GT(f.pattern_centre_correlation_after, f.pattern_centre_correlation_before);
  double t = 0;
  const NpyArray tf = read_npy(dir + "/scan/truth_fraction.npy");
  for (float v : tf.values) t += v / tf.values.size();
  EXPECT_NEAR(f.mean_raw(), t, 0.02);
  std::filesystem::remove_all(dir);
}

TEST(OrderedFraction, CobaltAndB2PairsFromTheirCifFilesAlone) {
  // Orientations found from the patterns and then the fraction stage: the indexing families, the
  // superlattice families, the model references and the estimator all come from the pairs' CIF
  // files with nothing else changed.
  for (const std::string pair : {"co", "feal"}) {
    const ScenarioRun r = run_scenario(scenario(kSecondary, 48, 5000, pair));
    EXPECT_EQ(r.orientations.grains.count(), 3) << pair;
    // In this scan one B2 grain is first indexed 60° about <111> off (a pseudo-symmetric solution
    // of the body-centred cubic parent) and mapped back by the grain-level check.
    if (pair == "feal") {
      EXPECT_GE(r.orientations.pseudo_symmetric_grains, 1);
    }
    EXPECT_NEAR(r.fraction.mean_raw(), truth_mean(r), 0.03) << pair;  // issue Step 6: within ±0.03
  }
}

FractionSpec learned_spec() {
  FractionSpec spec;
  spec.estimator = FractionEstimator::learned;
  return spec;
}

TEST(LearnedFraction, ClassifiesWhereTheModelsWeightsAreWrong) {
  // Band weights ∝ |F| instead of the model's |F|²: the {100} band is about 9× stronger
  // than the model says (and, each phase's weights scaled by its own strongest family, every
  // fundamental band's γ′/γ ratio changes too), and the model-led estimator puts the matrix near
  // −2.4 and the particles near 6 (mismatch bench). The learned estimator is not told; it finds two
  // phases, classifies ≥ 95 % of the points away from phase boundaries and holds the area fraction
  // within the issue's ±0.03. On most other variants it does not yet (DEVELOPERS.md).
  const ScenarioRun r = run_scenario(scenario("band_exponent = 1.0\n" + kSecondary, 40), 0, false, {}, learned_spec());
  EXPECT_TRUE(r.fraction.two_phases);
  EXPECT_EQ(r.fraction.estimator, "learned");
  EXPECT_GE(classification(r), 0.95);
  EXPECT_NEAR(r.fraction.mean_raw(), truth_mean(r), 0.03);  // measured +0.005
  // The learned difference of the {100} family carries a band: larger inside (|u| < 0.5) than
  // outside (|u| > 1.5).
  int checked = 0;
  for (const auto& f : r.fraction.families) {
    if (f.label != "{100}") continue;
    double in = 0, out = 0;
    int ni = 0, no = 0;
    for (size_t b = 0; b < f.learned_u.size(); ++b)
      if (std::abs(f.learned_u[b]) < 0.5)
        in += f.learned_difference[b], ++ni;
      else if (std::abs(f.learned_u[b]) > 1.5)
        out += f.learned_difference[b], ++no;
    ASSERT_GT(ni, 0);
    ASSERT_GT(no, 0);
    EXPECT_GT(in / ni, out / no);
    ++checked;
  }
  EXPECT_EQ(checked, 1);
}

/// Mean f of the pure matrix points (truth ≤ 0.005, no neighbour holding γ′) next to another grain
/// and inside the grains.
struct MatrixMeans {
  double next_to_other_grain = 0, inside_grains = 0;
  size_t count_next_to_other_grain = 0;
};
MatrixMeans pure_matrix_means(const ScenarioRun& r) {
  const ScanGrid& grid = r.config.grid;
  const auto& id = r.orientations.grains.id;
  double sum[2] = {0, 0}, n[2] = {0, 0};
  for (size_t k = 0; k < grid.count(); ++k) {
    if (r.fraction.reason[k] || r.truth[k] > 0.005) continue;
    bool other_grain = false, near_particle = false;
    for (const GridPoint& nb : grid.neighbours(grid.point(k), 8)) {
      other_grain = other_grain || id[grid.index(nb)] != id[k];
      near_particle = near_particle || r.truth[grid.index(nb)] > 0.005;
    }
    if (near_particle) continue;
    sum[other_grain] += r.fraction.raw[k], n[other_grain] += 1;
  }
  return {sum[1] / n[1], sum[0] / n[0], static_cast<size_t>(n[1])};
}

TEST(LearnedFraction, AreaFractionWhereTheOrderedFundamentalsAreWeaker) {
  // A renderer variant (issue Wave 2 · A, "Must show"): γ′'s fundamental bands 0.8 × γ's. In the
  // mismatch bench the model-led estimator is off by +0.09 on it, the learned one by −0.002; here it
  // must hold the issue's ±0.03 and classify ≥ 95 % away from phase boundaries.
  const ScenarioRun r = run_scenario(scenario("[renderer]\nordered_fundamental_ratio = 0.8\n" + kSecondary, 40), 0,
                                     false, {}, learned_spec());
  EXPECT_TRUE(r.fraction.two_phases);
  EXPECT_NEAR(r.fraction.mean_raw(), truth_mean(r), 0.03);
  EXPECT_GE(classification(r), 0.95);
  // Pure matrix next to a grain boundary (the beam sees a second lattice there, taken out of the
  // features) reads as the matrix inside the grains. Measured +0.048 (inside −0.001); +0.134 with
  // the other lattice's share fitted without the grain's learned ordering direction beside it,
  // which here weakens the fundamental bands as a second lattice does.
  const MatrixMeans m = pure_matrix_means(r);
  EXPECT_NEAR(m.next_to_other_grain, 0.0, 0.08) << m.count_next_to_other_grain << " points";
  EXPECT_NEAR(m.inside_grains, 0.0, 0.03);
}

/// The many-beam scan of the tests below: 40 × 40 points, 3 grains, secondary γ′ and primary
/// particles with their own orientation, rendered from spheres with strong/weak limits 32/160
/// (the defaults otherwise: nside 128, mean depth 10 nm), cached in `cache`.
constexpr double kManyBeamStrongLimit = 32;
std::string many_beam_scenario(const std::string& cache) {
  const std::string many_beam =
      "model = \"many-beam\"\nsphere_strong_limit = 32\nsphere_weak_limit = 160\n"
      "sphere_cache = \"" +
      cache + "\"\n";
  const std::string primary =
      "[primary]\narea_fraction = 0.10\ndistribution = \"lognormal\"\nmedian_diameter_um = 0.35\nsigma_ln = 0.1\n"
      "own_orientation = true\n";
  return scenario(many_beam + kSecondary + primary, 40);
}

TEST(LearnedFraction, HoldsOnManyBeamPatterns) {
  // Issue Wave 2 · F, "Must show": patterns interpolated from each phase's Bloch-wave sphere
  // (dynamical band profiles, excess and deficiency lines, intensities that do not follow |F|²),
  // never the estimator's kinematic model; 3 grains, primary and secondary γ′, 5,000 counts,
  // 60 × 60 px. The learned estimator must hold ±0.03 of the true area fraction and classify
  // ≥ 95 % of the points away from phase boundaries. The spheres here use a smaller beam set than
  // the default (19 instead of about 60 strong beams) to keep the test short; the 48 × 48 copy of
  // the demo's 4 h trial with the default spheres measured −0.006 and 98.9 % (DEVELOPERS.md), where
  // the model-led estimator read 1.42 for a truth of 0.50. Measured here: −0.0004, 100 % (+0.014
  // and 99.5 % before the measured patterns were used for other lattices at boundaries).
  const std::string cache = test::make_temp_dir("many-beam-spheres");
  const ScenarioRun r = run_scenario(many_beam_scenario(cache), 0, false, {}, learned_spec());
  EXPECT_EQ(r.truth_json["scenario"]["pattern_model"], "many-beam");
  EXPECT_GT(r.truth_json["classes"]["primary"]["area_fraction"].get<double>(), 0.03);
  EXPECT_TRUE(r.fraction.two_phases);
  EXPECT_NEAR(r.fraction.mean_raw(), truth_mean(r), 0.03);
  EXPECT_GE(classification(r), 0.95);
  // Matrix points beside another grain: the other lattice is taken out along its grain's measured
  // mean pattern seen in this grain's frame (measured 0.036; 0.091 when it was taken out along the
  // kinematic model's pattern, whose band profiles are not the dynamical ones; area −0.0004 against
  // +0.009 then).
  EXPECT_LT(boundary_matrix_mean(r), 0.06);
  std::filesystem::remove_all(cache);
}

TEST(LearnedFraction, OnePhaseOfManyBeamPatternsIsFoundAsOnePhase) {
  // Scans of one phase (three grains of pure γ; three of pure γ′) rendered from the Bloch-wave
  // spheres of HoldsOnManyBeamPatterns: the learner must not split dynamical noise into two phases,
  // and pure γ must read 0 (mean f within 0.05, ≥ 95 % of the points below one half). Which phase
  // a one-phase scan is comes from the kinematic model's intensities scaled to the data, and that
  // name is not reliable: here pure γ′ is named disordered (f 0), where from the default spheres
  // (384 / 1,920, 32 × 32 points, `orderband map`, 2026-12-05) both phases were named right, and on
  // four of eight kinematic variants one of them is wrong (OnePhaseIsReportedAsOnePhase). The map's
  // warnings say so on every one-phase verdict.
  const std::string cache = test::make_temp_dir("many-beam-one-phase");
  const std::string many_beam =
      "model = \"many-beam\"\nsphere_strong_limit = 32\nsphere_weak_limit = 160\n"
      "sphere_cache = \"" +
      cache + "\"\n[grains]\ncount = 3\n";
  for (const bool ordered : {false, true}) {
    const std::string phase = ordered ? "[tertiary]\nfraction = 1.0\n" : "";
    const ScenarioRun r = run_scenario(scenario(many_beam + phase, 32), 0, false, {}, learned_spec());
    const char* what = ordered ? "all γ′" : "all γ";
    EXPECT_FALSE(r.fraction.two_phases) << what << ": evidence " << r.fraction.learned_evidence;
    if (ordered) continue;
    EXPECT_FALSE(r.fraction.single_phase_ordered);
    EXPECT_NEAR(r.fraction.mean_raw(), 0.0, 0.05);
    size_t right = 0, measured = 0;
    for (size_t k = 0; k < r.fraction.raw.size(); ++k)
      if (!r.fraction.reason[k]) right += r.fraction.raw[k] < 0.5, ++measured;
    EXPECT_GE(right, 0.95 * measured);
  }
  std::filesystem::remove_all(cache);
}

TEST(OrderedFraction, ManyBeamReferenceOnManyBeamPatterns) {
  // Issue Wave 2 · F, "Must show": the many-beam spheres as the estimators' reference instead of
  // the kinematic model, on many-beam patterns (the scan of LearnedFraction.HoldsOnManyBeamPatterns:
  // spheres with strong/weak limits 32/160 and a mean depth of 10 nm; truth 0.317).
  //  - The same spheres as reference (self-consistency only, a check that the reference path
  //    renders what synth renders): the model-led estimator within ±0.03 (measured −0.005, 100 %).
  //  - Spheres the renderer was not made with, as any computed reference is for real patterns
  //    (limits 16/80, mean depth 20 nm): the learned estimator must hold ±0.03 and classify ≥ 95 %
  //    (measured +0.004, 99.9 %; with the kinematic reference +0.014). The model-led one reads
  //    −0.138 here (75 % classified); with only the beam set changed −0.053, with only the depth
  //    0.185: the model-led estimator needs the reference's intensities right, and a dynamical
  //    reference is not converged to that (DEVELOPERS.md, beam-set convergence). (Readings, not
  //    errors: −0.138, −0.053 and 0.185 are off the truth by −0.45, −0.37 and −0.13.)
  const std::string cache = test::make_temp_dir("many-beam-reference");
  const std::string text = many_beam_scenario(cache);
  const OrderingPair pair = load_named_pair("ni");
  // Spheres through the scan's cache folder: the renderer's own are computed here once and read
  // from the cache by synth (an empty folder: not cached).
  auto spheres_with = [&](double strong_limit, double mean_depth_nm, const std::string& folder) {
    DynamicalSphereSpec spec;
    spec.beams = {1.6, strong_limit, 5 * strong_limit};
    spec.depth.mean_depth_A = 10 * mean_depth_nm;
    auto sphere_of = [&](const Phase& phase) {
      return cached_dynamical_sphere(phase, spec, folder, {kVersion, "test", phase.source}, {});
    };
    return std::array<DynamicalSphere, 2>{sphere_of(pair.ordered), sphere_of(pair.disordered)};
  };

  const auto same = spheres_with(kManyBeamStrongLimit, 10, cache);
  FractionSpec model_led;
  model_led.reference_spheres = {&same[0].intensity, &same[1].intensity};
  const ScenarioRun s = run_scenario(text, 0, false, {}, model_led);
  EXPECT_NEAR(s.fraction.mean_raw(), truth_mean(s), 0.03) << "model-led, the renderer's own spheres";

  const auto other = spheres_with(16, 20, "");
  FractionSpec learned = learned_spec();
  learned.reference_spheres = {&other[0].intensity, &other[1].intensity};
  const ScenarioRun r = run_scenario(text, 0, false, {}, learned);
  EXPECT_TRUE(r.fraction.two_phases);
  EXPECT_NEAR(r.fraction.mean_raw(), truth_mean(r), 0.03) << "learned, spheres of other parameters";
  EXPECT_GE(classification(r), 0.95);
  std::filesystem::remove_all(cache);
}

TEST(LearnedFraction, HoldsOnRendererVariantsItIsNotTold) {
  // Issue Wave 2 · A, "Must show": renderer variants the estimator is never told, on this file's
  // secondary-γ′ scan (3 grains, 40 × 40 points, 60 × 60 px, 5,000 counts), the learned estimator
  // within ±0.03 of the true area fraction and ≥ 95 % of the points away from phase boundaries on
  // the right side of one half. Measured: −0.005 … +0.007, 96.7–100 %. The model-led estimator
  // misses ±0.03 on five of these six in the mismatch bench (−0.46 with the family contrasts, −0.60
  // with misfit and double amplitude). Not yet held (DEVELOPERS.md), measured on this scan: flat
  // bands −0.057, Gaussian bands −0.047 (95.8 % classified), detector gamma 0.8 −0.039, and the
  // tertiary level, which the learned estimator counts as matrix.
  const std::vector<std::pair<std::string, std::string>> variants = {
      {"dark edges, steep background", "edge_contrast = -0.3\nbackground_falloff = 0.8\n"},
      {"misfit +0.3 %, band amplitude 0.25", "band_amplitude = 0.25\n[renderer]\nlattice_misfit = 0.003\n"},
      {"detector gamma 1.2, linear background", "[renderer]\ndetector_gamma = 1.2\nbackground_shape = \"linear\"\n"},
      {"γ′ fundamentals × 1.1 with dark edges",
       "[renderer]\nordered_fundamental_ratio = 1.1\nordered_fundamental_edge_contrast = -0.2\n"},
      {"family contrasts ±30 %, |F|^1.5",
       "band_exponent = 1.5\n[renderer]\nfamily_contrast_spread = 0.3\nfamily_contrast_seed = 7\n"},
      {"asymmetric edge lines", "edge_contrast = 0.3\n[renderer]\nedge_asymmetry = 0.8\n"},
  };
  for (const auto& [name, variant] : variants) {
    const ScenarioRun r = run_scenario(scenario(variant + kSecondary, 40), 0, false, {}, learned_spec());
    EXPECT_TRUE(r.fraction.two_phases) << name;
    EXPECT_NEAR(r.fraction.mean_raw(), truth_mean(r), 0.03) << name;
    EXPECT_GE(classification(r), 0.95) << name;
  }
}

/// A variant of the mismatch suite: its name, the bench's seed for it, its [patterns] and [renderer] keys.
struct SuiteVariant {
  const char* name;
  int seed;
  std::string patterns, renderer;
};

/// The mismatch bench's scan (bench/mismatch_bench.cpp): 40 × 40 points, three grains, one primary
/// particle of 0.4 µm with its own orientation, secondary γ′ 25 %, with the bench's seed per variant;
/// optionally tertiary γ′ and a γ′-free layer along the first rows.
std::string mismatch_suite_scenario(const SuiteVariant& v, double tertiary = 0, double free_layer_um = 0) {
  return "[scenario]\nseed = " + std::to_string(v.seed) +
         "\n[scan]\nrows = 40\ncols = 40\nstep_um = 0.025\n[detector]\nwidth_px = 60\nheight_px = 60\n"
         "pc_px = [30.0, 18.0]\ndistance_px = 45.0\n[phases]\npair = \"ni\"\n[patterns]\ncounts_per_px = 5000\n" +
         v.patterns + "[renderer]\n" + v.renderer +
         "[grains]\ncount = 3\n[primary]\narea_fraction = 0.06\ndistribution = \"fixed\"\ndiameter_um = 0.4\n"
         "own_orientation = true\n[secondary]\narea_fraction = 0.25\ndistribution = \"lognormal\"\n"
         "median_diameter_um = 0.15\nsigma_ln = 0.2\n[tertiary]\nfraction = " +
         std::to_string(tertiary) + "\n[free_layer]\ndepth_um = " + std::to_string(free_layer_um) + "\n";
}

TEST(LearnedFraction, ADisorderedReferenceRegionMeasuresTheTertiaryShare) {
  // Issue Wave 2 · A, item 4, as decided: the learned estimator's zero is each grain's matrix, so
  // tertiary γ′ finer than the beam counts as matrix; a region known to be free of γ′ sets the
  // zero instead, the particles still the ordered end member. Two variants of the mismatch suite
  // with tertiary 0.05 (the bench's seeds), each with a γ′-free layer of 12 rows (0.3 µm, as
  // beneath an oxidised edge) whose first 10 rows are given as the disordered region (no ordered
  // region). The sub-resolution fraction and the area must hold within the issue's ±0.03.
  // Measured (the scans of mismatch_bench's last table), sub-resolution and area against the truth:
  // flat bands −0.012 and −0.009, γ′ fundamentals × 1.1 with dark edges −0.014 and −0.001 (−0.006
  // and −0.011 with the matrix next to grain boundaries in the sub-resolution fraction). Without
  // the region the sub-resolution fraction reads 0 by construction and is flagged as not measured
  // (the same scans' areas −0.055 and −0.019).
  const std::vector<SuiteVariant> cases = {
      {"flat sharp bands", 33, "edge_contrast = 0.0\n", "band_shape = \"flat\"\n"},
      {"γ′ fundamentals × 1.1, dark edges", 39, "",
       "ordered_fundamental_ratio = 1.1\nordered_fundamental_edge_contrast = -0.2\n"}};
  for (const SuiteVariant& c : cases) {
    FractionSpec spec = learned_spec();
    spec.end_members = EndMemberMode::regions;
    spec.disordered_regions = {PointRect{0, 0, 9, 39}};
    const ScenarioRun r = run_scenario(mismatch_suite_scenario(c, 0.05, 0.3), 0, false, {}, spec);
    EXPECT_TRUE(r.fraction.two_phases) << c.name;
    EXPECT_FALSE(r.fraction.zero_is_matrix) << c.name;
    EXPECT_NEAR(r.fraction.subresolution_fraction, 0.05, 0.03) << c.name;
    EXPECT_NEAR(r.fraction.mean_raw(), measured_truth_mean(r), 0.03) << c.name;
    EXPECT_GE(classification(r), 0.95) << c.name;
  }
}

TEST(LearnedFraction, AGrainOfOnePhaseIsNamedFromTheDataOnManyBeamPatterns) {
  // The mismatch suite's many-beam scan with tertiary 0.05 (the smaller beam set of
  // HoldsOnManyBeamPatterns), with a γ′-free layer of 12 rows whose first 10 are the disordered
  // region, over the seeds whose field holds the primary particle as a grain of its own. The
  // primary (one phase, its own orientation) is named by its position between the two-phase
  // grains' matrix and particles. By the kinematic model's change between the two orientations, as
  // the naming was done before, seeds 40 and 44 named it disordered (area −0.135 and −0.123, the
  // primary's grain at 0.03 and 0.04; the bench's own scan −0.120); compared over the crystal
  // directions both grains show, measured: area −0.014, +0.004, −0.002, −0.004 (seeds 40, 41, 44,
  // 46), the primary's grain at 0.97–0.98.
  const std::string cache = test::make_temp_dir("many-beam-layer-spheres");
  for (const int seed : {40, 41, 44, 46}) {
    const SuiteVariant c{
        "many-beam, tertiary 0.05", seed,
        "model = \"many-beam\"\nsphere_strong_limit = 32\nsphere_weak_limit = 160\nsphere_cache = \"" + cache + "\"\n",
        ""};
    FractionSpec spec = learned_spec();
    spec.end_members = EndMemberMode::regions;
    spec.disordered_regions = {PointRect{0, 0, 9, 39}};
    const ScenarioRun r = run_scenario(mismatch_suite_scenario(c, 0.05, 0.3), 0, false, {}, spec);
    EXPECT_TRUE(r.fraction.two_phases) << "seed " << seed;
    EXPECT_NEAR(r.fraction.mean_raw(), measured_truth_mean(r), 0.03) << "seed " << seed;
    EXPECT_NEAR(r.fraction.subresolution_fraction, 0.05, 0.03) << "seed " << seed;
    // The grain that is mostly ordered in truth (the primary) reads above 0.9.
    const GrainMap& grains = r.orientations.grains;
    std::vector<double> ordered(grains.count() + 1), f(grains.count() + 1), points(grains.count() + 1);
    for (size_t k = 0; k < r.truth.size(); ++k)
      if (const int g = grains.id[k]; g > 0 && !r.fraction.reason[k])
        ordered[g] += r.truth[k] >= 0.5, f[g] += r.fraction.raw[k], points[g] += 1;
    int primaries = 0;
    for (int g = 1; g <= grains.count(); ++g)
      if (points[g] >= 20 && ordered[g] > 0.5 * points[g]) {
        EXPECT_GT(f[g] / points[g], 0.9) << "seed " << seed << ", grain " << g;
        // Named as one phase by the comparison over common directions, past one half with a margin
        // (measured 0.74, 1.05, 1.25, 1.38).
        const GrainFraction& named = r.fraction.grains[g - 1];
        EXPECT_EQ(named.kind, GrainKind::ordered_alone) << "seed " << seed;
        EXPECT_EQ(named.named_by, GrainNamedBy::common_view) << "seed " << seed;
        EXPECT_GT(named.named_position, 0.6) << "seed " << seed;
        ++primaries;
      }
    EXPECT_EQ(primaries, 1) << "seed " << seed;
  }
  std::filesystem::remove_all(cache);
}

TEST(LearnedFraction, HoldsOnTheSuitesVariantsThatChainedGrainsAndFaintGrainsBroke) {
  // Two variants of the mismatch suite, on the bench's own scans. Band weights ∝ |F|: beam-mixed
  // points chained the primary particle into its neighbour's grain (area −0.216 before the split of
  // grains with two orientation groups). Gaussian bands: a γ grain whose particles are too faint
  // point by point (ΔBIC −0.7) was taken for ordered alone (+0.154 before its neighbourhood means
  // were tested). Measured now: +0.006 and −0.006; the primary's grain at 0.97 and 0.98 (issue
  // Wave 2 · A: > 0.9); each pure-γ grain's matrix within 0.05.
  const std::vector<SuiteVariant> cases = {
      {"weights |F|^1", 32, "band_exponent = 1.0\n", ""},
      {"Gaussian bands", 34, "edge_contrast = 0.0\n", "band_shape = \"gaussian\"\n"}};
  for (const SuiteVariant& c : cases) {
    const ScenarioRun r = run_scenario(mismatch_suite_scenario(c), 0, false, {}, learned_spec());
    EXPECT_TRUE(r.fraction.two_phases) << c.name;
    EXPECT_NEAR(r.fraction.mean_raw(), truth_mean(r), 0.03) << c.name;
    // Per found grain: mostly ordered in truth (the primary) → mean f > 0.9; else its matrix
    // points (truth 0) within 0.05 of 0.
    const GrainMap& grains = r.orientations.grains;
    std::vector<double> ordered(grains.count() + 1), f(grains.count() + 1), points(grains.count() + 1),
        matrix(grains.count() + 1), matrix_points(grains.count() + 1), truth(grains.count() + 1);
    for (size_t k = 0; k < r.truth.size(); ++k) {
      const int g = grains.id[k];
      if (g <= 0 || r.fraction.reason[k]) continue;
      ordered[g] += r.truth[k] >= 0.5, f[g] += r.fraction.raw[k], points[g] += 1, truth[g] += r.truth[k];
      if (r.truth[k] <= 0.02) matrix[g] += r.fraction.raw[k], matrix_points[g] += 1;
    }
    int primaries = 0;
    for (int g = 1; g <= grains.count(); ++g) {
      if (points[g] < 20) continue;
      if (ordered[g] > 0.5 * points[g]) {
        EXPECT_GT(f[g] / points[g], 0.9) << c.name << ", grain " << g;
        // Its edge points count the neighbour's matrix the beam also sees, as the truth does
        // (the beam-weighted γ′ share): measured +0.012 and +0.019 against the truth; +0.044 and
        // +0.050 when the other lattice taken out of their features was not counted back.
        EXPECT_NEAR(f[g] / points[g], truth[g] / points[g], 0.03) << c.name << ", grain " << g;
        ++primaries;
      } else if (matrix_points[g] >= 20) {
        EXPECT_NEAR(matrix[g] / matrix_points[g], 0.0, 0.05) << c.name << ", grain " << g;
      }
    }
    EXPECT_EQ(primaries, 1) << c.name;
  }
}

/// The learned estimator on a 24 × 24 small scan (test::write_small_scan) of seed `seed` and
/// renderer `variant`, and its area error against the truth over the measured points.
struct SmallScanRun {
  FractionResults fraction;
  double area_error = 0;
};

SmallScanRun learned_small_scan(int seed, const std::string& variant = "") {
  const std::string dir = test::make_temp_dir("small-learned");
  const ScanConfig config = read_scan_config(test::write_small_scan(dir, 24, seed, variant));
  const OrientationResults ori = orient_scan(read_scan_inputs(config));
  SmallScanRun r{ordered_fraction_scan(read_scan_inputs(config), ori, learned_spec()), 0};
  const std::vector<float> truth = read_npy(dir + "/scan/truth_fraction.npy").values;
  std::filesystem::remove_all(dir);
  double measured = 0, true_area = 0, n = 0;
  for (size_t k = 0; k < truth.size(); ++k)
    if (r.fraction.reason[k] == 0) measured += r.fraction.raw[k], true_area += truth[k], n += 1;
  r.area_error = (measured - true_area) / n;
  return r;
}

TEST(LearnedFraction, HoldsUnderALongFootprintOnScansWhereItBrokeBefore) {
  // The mismatch suite's footprint 2.9 × longer along the tilt (reach 3 rows) on other layouts of
  // its scenario (seeds 31 + 12 + 61, + 63 and + 66: mismatch_bench's SEED_OFFSET; its own seed 43
  // had read −0.018, which hid the rest). Two things broke the learned scale there. Points two and
  // three rows from a grain boundary across the footprint see a tenth of the other lattice, which
  // was taken out only next to the boundary; and points in the first and last two rows see
  // material beyond the field, another grain or a particle's edge, that no lattice can be taken out
  // for. Single points read f = 5 to 40, the scale followed them: area +0.673 (particles 3.06),
  // −0.210 and −0.174 (particles 0.12 and 0.62). Now the other lattices are taken out wherever the
  // footprint reaches another grain (second learning, beside the learned ordering) and the points
  // reaching past the field's edge are scored but not learned from (DEVELOPERS, change 18):
  // measured +0.045, +0.025 and +0.020, particles 1.065, 0.986 and 1.024. The tolerance (±0.06, not
  // the issue's ±0.03) states what this footprint holds: points near grain boundaries still read
  // about 0.1 high, so twelve such layouts read +0.020 to +0.085 but for one at −0.146 (strays at a
  // side edge, where the footprint is narrow and the rule does not apply).
  for (const int seed : {104, 106, 109}) {
    const SuiteVariant c{"beam 2.9x along tilt", seed, "", "beam_elongation = 2.9\n"};
    const ScenarioRun r = run_scenario(mismatch_suite_scenario(c), 0, false, {}, learned_spec());
    EXPECT_TRUE(r.fraction.two_phases) << "seed " << seed;
    EXPECT_NEAR(r.fraction.mean_raw(), measured_truth_mean(r), 0.06) << "seed " << seed;
    double particles = 0, count = 0;
    for (size_t k = 0; k < r.truth.size(); ++k)
      if (!r.fraction.reason[k] && r.truth[k] > 0.9) particles += r.fraction.raw[k], count += 1;
    ASSERT_GT(count, 100) << "seed " << seed;
    EXPECT_NEAR(particles / count, 1.0, 0.08) << "seed " << seed;
  }
}

TEST(LearnedFraction, SmallScansShowTheirSecondPhaseThroughTheirPatches) {
  // The package test's kind of scan at 24 × 24 points (48 × 48 px, 5,000 counts, 2 grains, secondary
  // γ′ of about 0.27 true area; seeds 1–5). Point by point the phases lie about d′ 1.5–2 apart, and
  // before the map's patches placed the end members every one of these read "one phase, f = 0"
  // (an error of −0.24 to −0.32). Measured now: −0.043, +0.021, +0.060, −0.019, −0.112 (four of
  // the five placed by their patches, seed 3 by its scores' own mixture): each within ±0.12 of the
  // truth, RMS within 0.07, all two-phase.
  double sum_sq = 0;
  int by_patches = 0;
  for (int seed = 1; seed <= 5; ++seed) {
    const SmallScanRun r = learned_small_scan(seed);
    const FractionResults& f = r.fraction;
    const double error = r.area_error;
    EXPECT_TRUE(f.two_phases) << "seed " << seed;
    EXPECT_NEAR(error, 0.0, 0.12) << "seed " << seed;
    sum_sq += error * error, by_patches += f.learned_placed_by_patches;
  }
  EXPECT_LT(std::sqrt(sum_sq / 5), 0.07);
  EXPECT_GE(by_patches, 3);
}

TEST(LearnedFraction, AGrainWithStructureIsNotTakenForTheOrderedPhaseAlone) {
  // The small scan of the test above with flat, sharp-edged bands (a renderer the estimator is not
  // told), seed 4: a grain of 202 points with 19 % particles shows no second component in its
  // scores (ΔBIC 3.4) and its map structure stays just below the split's threshold (z 4.7); the
  // transfer from the other grain put it at 0.66 of the way to ordered, and the whole grain was read
  // as ordered: area 0.557 for a truth of 0.237. A grain whose map shows structure (z ≥ 3) is not
  // taken for the ordered phase alone: measured now +0.023, that grain 0.17 for its 0.19.
  const SmallScanRun r = learned_small_scan(4, "edge_contrast = 0.0\n[renderer]\nband_shape = \"flat\"\n");
  const FractionResults& f = r.fraction;
  EXPECT_TRUE(f.two_phases);
  EXPECT_NEAR(r.area_error, 0.0, 0.06);
  for (size_t g = 0; g < f.grains.size(); ++g) EXPECT_LT(f.grains[g].mean, 0.5) << "grain " << g + 1;
}

TEST(LearnedFraction, OnePhaseIsReportedAsOnePhase) {
  // Issue Wave 2 · A, "Must show": scans of one phase (three grains of pure γ; three grains of pure
  // γ′, rendered as a matrix ordered throughout) on the default renderer and seven variants the
  // estimator is not told. The learner must not split noise into two halves: one phase on all 16.
  // Which phase it is has no data-led answer without a second phase to compare with; it comes from
  // the grains' levels between the model's phases with the data's band scale (scaled_model_level):
  // measured γ / γ′ medians 0.01 / 0.89 (default), −3.7 / 2.1 (|F|¹), 0.14 / 1.04 (gamma 1.2),
  // −0.92 / 1.09 (family contrasts), so mean f within 0.05 of 0 resp. 1 with ≥ 95 % of the points
  // on the right side of one half there. Not yet on the others: dark edges put pure γ at 1.25,
  // flat bands at 0.76, Gaussian bands at 2.7 (γ′ 2.2, 1.7, 3.4), misfit with double amplitude puts
  // pure γ′ at 0.45 (DEVELOPERS.md).
  struct Case {
    const char* name;
    std::string variant;
    bool phase_checked;
  };
  const std::vector<Case> cases = {
      {"default renderer", "", true},
      {"weights |F|^1", "band_exponent = 1.0\n", true},
      {"detector gamma 1.2, linear background", "[renderer]\ndetector_gamma = 1.2\nbackground_shape = \"linear\"\n",
       true},
      {"family contrasts ±30 %, |F|^1.5",
       "band_exponent = 1.5\n[renderer]\nfamily_contrast_spread = 0.3\nfamily_contrast_seed = 7\n", true},
      {"dark edges, steep background", "edge_contrast = -0.3\nbackground_falloff = 0.8\n", false},
      {"flat sharp bands", "edge_contrast = 0.0\n[renderer]\nband_shape = \"flat\"\n", false},
      {"Gaussian bands", "edge_contrast = 0.0\n[renderer]\nband_shape = \"gaussian\"\n", false},
      {"misfit +0.3 %, band amplitude 0.25", "band_amplitude = 0.25\n[renderer]\nlattice_misfit = 0.003\n", false},
  };
  for (const Case& c : cases)
    for (const bool ordered : {false, true}) {
      const std::string phase = ordered ? "[tertiary]\nfraction = 1.0\n" : "";
      const ScenarioRun r =
          run_scenario(scenario(c.variant + "[grains]\ncount = 3\n" + phase, 32), 0, false, {}, learned_spec());
      const std::string what = std::string(c.name) + (ordered ? ", all γ′" : ", all γ");
      EXPECT_FALSE(r.fraction.two_phases) << what << ": evidence " << r.fraction.learned_evidence;
      if (!c.phase_checked) continue;
      EXPECT_EQ(r.fraction.single_phase_ordered, ordered) << what;
      EXPECT_NEAR(r.fraction.mean_raw(), ordered ? 1.0 : 0.0, 0.05) << what;
      size_t right = 0, measured = 0;
      for (size_t k = 0; k < r.fraction.raw.size(); ++k)
        if (!r.fraction.reason[k]) right += (r.fraction.raw[k] >= 0.5) == ordered, ++measured;
      EXPECT_GE(right, 0.95 * measured) << what;
    }
}

}  // namespace
}  // namespace orderband
