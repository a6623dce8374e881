// The model-mismatch suite: synthetic scans rendered with variants the fraction stage is never told
// (synth.hpp RendererVariant), each analysed with the model-led and the learned estimator side by side.
// usage: mismatch_bench [SIDE=40] [COUNTS=5000] [FIRST=0] [LAST=all] [SEED_OFFSET=0]
// (each variant's scan has the seed 31 + its index + SEED_OFFSET: other offsets give other
// microstructures of the same scenario, to see how much one scan's figures owe to its layout)
// Prints one table per estimator: area fraction error, classification away from phase boundaries,
// d′ between pure particle and pure matrix points, the variant's information limit (Fisher d′ of the
// renderer's noise-free pure patterns at the grains' orientations), their ratio, the same d′ over the
// pure points of one lattice (no other grain among the eight neighbours) against the shape limit, and
// points/s; then,
// for every variant, the learned estimator with a γ′-free layer as its disordered region.
// ORDERBAND_BENCH_DETAIL=1 lists every grain's truth, mean f and pure-matrix mean on stderr;
// ORDERBAND_BENCH_SPHERE_REFERENCE=1 gives the many-beam variants their spheres as the reference.
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "orderband/enum_names.hpp"
#include "orderband/learned_fraction.hpp"
#include "orderband/npy_io.hpp"
#include "orderband/ordered_fraction.hpp"
#include "orderband/orientation_csv.hpp"
#include "orderband/pair_catalog.hpp"
#include "orderband/preprocess.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/synth.hpp"
#include "orderband/synth_scan.hpp"

using namespace orderband;

namespace {

struct Variant {
  const char* name;
  const char* patterns;  // extra [patterns] keys
  const char* renderer;  // [renderer] keys
  double tertiary;
};

// Twelve variants besides the default model (common practice, no source: ranges from the issue).
const Variant kSuite[] = {
    {"default model", "", "", 0.0},
    {"weights |F|^1", "band_exponent = 1.0\n", "", 0.0},
    {"flat sharp bands", "edge_contrast = 0.0\n", "band_shape = \"flat\"\n", 0.05},
    {"gaussian bands", "edge_contrast = 0.0\n", "band_shape = \"gaussian\"\n", 0.0},
    {"dark edges, steep bg", "edge_contrast = -0.3\nbackground_falloff = 0.8\n", "", 0.0},
    {"asymmetric edges", "edge_contrast = 0.3\n", "edge_asymmetry = 0.8\n", 0.05},
    {"family contrast +-30%", "band_exponent = 1.5\n", "family_contrast_spread = 0.3\nfamily_contrast_seed = 7\n", 0.0},
    {"gamma' fund. 0.8", "", "ordered_fundamental_ratio = 0.8\n", 0.0},
    {"gamma' fund. 1.1, dark", "", "ordered_fundamental_ratio = 1.1\nordered_fundamental_edge_contrast = -0.2\n", 0.05},
    {"detector gamma 0.8", "", "detector_gamma = 0.8\nbackground_shape = \"gaussian\"\n", 0.0},
    {"detector gamma 1.2", "", "detector_gamma = 1.2\nbackground_shape = \"linear\"\n", 0.0},
    {"misfit +0.3%, amplitude .25", "band_amplitude = 0.25\n", "lattice_misfit = 0.003\n", 0.0},
    {"beam 2.9x along tilt", "", "beam_elongation = 2.9\n", 0.0},
    {"PC error 0.5 px", "", "pc_error_px = [0.5, -0.4, 0.6]\n", 0.0},
    // Dynamical patterns: each phase's Bloch-wave sphere at the default beam set (cached in the
    // user's sphere cache; about 6 min for Ni₃Al and 8 min for both phases the first time).
    {"many-beam", "model = \"many-beam\"\n", "", 0.0},
    {"many-beam, tertiary 0.05", "model = \"many-beam\"\n", "", 0.05},
};

/// Fisher d′ of one pattern between pure disordered and pure ordered phase (Poisson noise),
/// averaged over the grains' orientations, inside the inscribed circle the estimator uses: `full`
/// from the two patterns as rendered, `shape` with the ordered pattern scaled to the same total
/// counts. The kinematic renderer adds band intensity on top of the background, so its γ′ (more
/// bands) is brighter overall; every pattern is normalised to its own mean in preprocessing (beam
/// current, topography and surface layers change a real pattern's brightness), so a per-point
/// estimator can reach about the shape limit at most. Real patterns differ in total yield by the phases'
/// backscatter coefficients, not by their bands (the many-beam spheres are each normalised to their
/// mean, so their two limits nearly agree).
struct InformationLimit {
  double full = 0, shape = 0;
};

struct Row {
  double area_error = 0, classification = 0, d_prime = 0, rate = 0, matrix = 0, particle = 0;
  InformationLimit limit;
  double d_prime_in_grains = 0;  // the same with each grain's class means taken out (no zero or scale between grains)
  // The same over the pure points with no other grain among their eight neighbours: patterns of one
  // lattice, as the information limit's are (at a grain boundary the beam sees two).
  double d_prime_one_lattice = 0;
  double worst_grain_matrix = 0, primary = std::nan("");  // max |matrix mean − tertiary|, min mostly-ordered grain's f
  double primary_truth = std::nan("");                    // that grain's mean true fraction (beam-weighted)
  double subresolution_error = 0;                         // sub-resolution fraction − tertiary truth
  bool two_phases = true;
};

/// d′ of two classes from their sums, sums of squares and counts: the difference of the means over
/// the root mean of the two variances.
double d_prime_of(const double sum[2], const double squares[2], const double count[2]) {
  const double m0 = sum[0] / count[0], m1 = sum[1] / count[1];
  const double v0 = squares[0] / count[0] - m0 * m0, v1 = squares[1] / count[1] - m1 * m1;
  return (m1 - m0) / std::sqrt(0.5 * (v0 + v1));
}

InformationLimit information_limit(const SynthScenario& s, const std::vector<Rotation>& grain_orientations) {
  InformationLimit limit;
  const OrderingPair pair = load_phases(s.phases);
  const RenderModels models = render_models(s, pair);
  const DetectorGeometry geometry(render_geometry(s));
  PatternRenderer renderer(geometry, models.ordered, models.disordered, s.counts_per_px, s.background_falloff,
                           s.variant.background, s.variant.detector_gamma);
  const ManyBeamSpheres spheres = many_beam_spheres(s, pair, "mismatch_bench");
  if (spheres.ordered) renderer.use_spheres(spheres.maps(), s.many_beam.contrast);
  PreprocessSpec mask_spec;  // the estimator's default mask: the inscribed circle
  mask_spec.static_background = StaticBackgroundKind::none;
  const Preprocessor masked(mask_spec, geometry.width(), geometry.height());
  std::vector<float> a(masked.mask().size()), b(a.size());
  for (const Rotation& g : grain_orientations) {
    renderer.expected({{g, false, 1.0, 0}}, geometry, a.data());
    renderer.expected({{g, true, 1.0, 0}}, geometry, b.data());
    double sa = 0, sb = 0;
    for (size_t q = 0; q < a.size(); ++q)
      if (masked.mask()[q]) sa += a[q], sb += b[q];
    const double matched = sa / sb;  // the ordered pattern scaled to the disordered one's total
    double d2 = 0, d2_shape = 0;
    for (size_t q = 0; q < a.size(); ++q) {
      if (!masked.mask()[q]) continue;
      d2 += std::pow(b[q] - a[q], 2) / (0.5 * (a[q] + b[q]));
      d2_shape += std::pow(matched * b[q] - a[q], 2) / (0.5 * (a[q] + matched * b[q]));
    }
    limit.full += std::sqrt(d2) / grain_orientations.size();
    limit.shape += std::sqrt(d2_shape) / grain_orientations.size();
  }
  return limit;
}

/// The suite's scan of variant v (seed 31 + v + seed_offset): 3 grains, one primary particle of 0.4 µm with its
/// own orientation, secondary γ′ 25 %, the variant's tertiary, and a γ′-free layer of the given
/// depth along the first rows (0: none).
std::string scenario_text(int v, int side, double counts, double free_layer_um, int seed_offset) {
  const Variant& var = kSuite[v];
  std::ostringstream os;
  os << "[scenario]\nseed = " << 31 + v + seed_offset << "\n[scan]\nrows = " << side << "\ncols = " << side
     << "\nstep_um = 0.025\n[detector]\nwidth_px = 60\nheight_px = 60\npc_px = [30.0, 18.0]\ndistance_px = 45.0\n"
        "[phases]\npair = \"ni\"\n[patterns]\ncounts_per_px = "
     << counts << "\n"
     << var.patterns << "[renderer]\n"
     << var.renderer
     << "[grains]\ncount = 3\n[primary]\narea_fraction = 0.06\ndistribution = \"fixed\"\ndiameter_um = 0.4\n"
        "own_orientation = true\n[secondary]\narea_fraction = 0.25\ndistribution = \"lognormal\"\n"
        "median_diameter_um = 0.15\nsigma_ln = 0.2\n[tertiary]\nfraction = "
     << var.tertiary << "\n";
  if (free_layer_um > 0) os << "[free_layer]\ndepth_um = " << free_layer_um << "\n";
  return os.str();
}

/// One scan of the suite rendered into `dir` and its orientations found, with its truth.
struct SuiteScan {
  SynthScenario scenario;
  ScanConfig config;
  OrientationResults ori;
  std::vector<float> truth;  ///< per point, the beam-weighted ordered fraction
};

SuiteScan render_suite_scan(int v, int side, double counts, double free_layer_um, int seed_offset,
                            const std::string& dir) {
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  std::ofstream(dir + "/s.toml") << scenario_text(v, side, counts, free_layer_um, seed_offset);
  SuiteScan s;
  s.scenario = read_synth_scenario(dir + "/s.toml");
  write_synthetic_scan(s.scenario, dir + "/scan", "mismatch_bench");
  s.config = read_scan_config(dir + "/scan/scan.toml");
  s.ori = orient_scan(read_scan_inputs(s.config, InputHashing::skip));
  s.truth = read_npy(dir + "/scan/truth_fraction.npy").values;
  return s;
}

/// The decision of issue Wave 2 · A, item 4, on every variant (four with tertiary γ′): the learned
/// estimator with a region known to be free of γ′ as its disordered end member (a layer of
/// kLayerRows rows along the field's first rows, as beneath an oxidised edge; all but its last two
/// rows given as the region), the ordered end member still the scan's particles. Prints the area error, the
/// sub-resolution fraction's error against the tertiary truth, the classification, and the worst
/// grain's pure matrix (outside the layer) against the tertiary truth.
void print_with_free_layer(int first, int last, int side, double counts, int seed_offset, const std::string& dir) {
  const int count = static_cast<int>(sizeof kSuite / sizeof kSuite[0]);
  constexpr int kLayerRows = 12, kRegionRows = kLayerRows - 2;
  std::printf(
      "\nlearned estimator, a γ′-free layer of %d rows (%.2f µm) along the first rows, its first %d rows "
      "given as the disordered region, %d x %d points\n",
      kLayerRows, 0.025 * kLayerRows, kRegionRows, side, side);
  std::printf("%-28s %9s %8s %7s %7s %7s\n", "variant", "area err", "class %", "sub-res", "|grain|", "region");
  double sum_sq = 0, largest = 0;
  int rows = 0, within = 0;
  for (int v = first; v <= last && v < count; ++v) {
    const SuiteScan run = render_suite_scan(v, side, counts, 0.025 * kLayerRows, seed_offset, dir);
    const ScanConfig& config = run.config;
    const OrientationResults& ori = run.ori;
    const std::vector<float>& truth = run.truth;
    const ScanGrid& grid = config.grid;
    FractionSpec spec;
    spec.estimator = FractionEstimator::learned;
    spec.end_members = EndMemberMode::regions;
    spec.disordered_regions = {PointRect{0, 0, kRegionRows - 1, grid.cols - 1}};
    const FractionResults fr = ordered_fraction_scan(read_scan_inputs(config, InputHashing::skip), ori, spec);
    double sum = 0, truth_sum = 0, measured = 0, inner = 0, correct = 0, region = 0, region_n = 0;
    std::map<int, std::array<double, 2>> matrix;  // per grain: sum, count of pure matrix points outside the layer
    for (size_t k = 0; k < grid.count(); ++k) {
      if (fr.reason[k]) continue;
      sum += fr.raw[k], truth_sum += truth[k], measured += 1;
      const GridPoint p = grid.point(k);
      if (p.row < kRegionRows) region += fr.raw[k], region_n += 1;
      const bool t = truth[k] >= 0.5;
      bool boundary = false;
      for (const GridPoint& nb : grid.neighbours(p, 8)) boundary = boundary || ((truth[grid.index(nb)] >= 0.5) != t);
      if (boundary) continue;
      inner += 1, correct += (fr.fraction[k] >= 0.5) == t;
      if (p.row >= kLayerRows + 2 && std::abs(truth[k] - kSuite[v].tertiary) < 0.005) {
        auto& m = matrix[ori.grains.id[k]];
        m[0] += fr.raw[k], m[1] += 1;
      }
    }
    double worst = 0;
    for (const auto& [g, m] : matrix)
      if (m[1] >= 20) worst = std::max(worst, std::abs(m[0] / m[1] - kSuite[v].tertiary));
    if (std::getenv("ORDERBAND_BENCH_DETAIL")) {
      FractionSpec plain;
      plain.estimator = FractionEstimator::learned;
      const FractionResults pr = ordered_fraction_scan(read_scan_inputs(config, InputHashing::skip), ori, plain);
      double ps = 0, pn = 0, pl = 0, pln = 0;
      for (size_t k = 0; k < grid.count(); ++k) {
        if (pr.reason[k]) continue;
        ps += pr.raw[k], pn += 1;
        if (grid.point(k).row < kRegionRows) pl += pr.raw[k], pln += 1;
      }
      std::fprintf(stderr, "  without the region: area %.4f (truth %.4f), region %.4f, two phases %d\n", ps / pn,
                   truth_sum / measured, pl / pln, pr.two_phases);
      std::fprintf(stderr, "  offset %.4f scale %.4f two phases %d\n", fr.calibration_offset, fr.calibration_scale,
                   fr.two_phases);
      std::map<int, std::array<double, 4>> plain_matrix;  // per grain: pure matrix outside the layer, region points
      for (size_t k = 0; k < grid.count(); ++k) {
        if (pr.reason[k]) continue;
        const GridPoint p = grid.point(k);
        auto& m = plain_matrix[ori.grains.id[k]];
        if (p.row < kRegionRows) m[2] += pr.raw[k], m[3] += 1;
        if (p.row >= kLayerRows + 2 && std::abs(truth[k] - kSuite[v].tertiary) < 0.005) m[0] += pr.raw[k], m[1] += 1;
      }
      for (const auto& [g, m] : plain_matrix)
        if (g > 0 && g <= static_cast<int>(pr.grains.size()))
          std::fprintf(stderr,
                       "  grain %d without the region: %zu points mean %.3f, matrix %.0f at %+.4f, region %.0f at "
                       "%+.4f, %s (%s at %.2f)\n",
                       g, pr.grains[g - 1].points, pr.grains[g - 1].mean, m[1], m[0] / m[1], m[3], m[2] / m[3],
                       std::string(name_of(pr.grains[g - 1].kind)).c_str(),
                       std::string(name_of(pr.grains[g - 1].named_by)).c_str(), pr.grains[g - 1].named_position);
      for (const auto& [g, m] : matrix) std::fprintf(stderr, "  grain %d matrix %.0f at %+.4f\n", g, m[1], m[0] / m[1]);
    }
    const double error = (sum - truth_sum) / measured;
    std::printf("%-28s %+9.3f %8.1f %+7.3f %7.3f %+7.3f\n", kSuite[v].name, error, 100 * correct / inner,
                fr.subresolution_fraction - kSuite[v].tertiary, worst, region / region_n);
    sum_sq += error * error, largest = std::max(largest, std::abs(error)), rows += 1, within += std::abs(error) <= 0.03;
  }
  if (rows > 0)
    std::printf("area error over %d variants: RMS %.3f, largest %.3f, within ±0.03 on %d\n", rows,
                std::sqrt(sum_sq / rows), largest, within);
}

}  // namespace

int main(int argc, char** argv) {
  const int side = argc > 1 ? std::atoi(argv[1]) : 40;
  const double counts = argc > 2 ? std::atof(argv[2]) : 5000;
  const int first = argc > 3 ? std::atoi(argv[3]) : 0;
  const int count = static_cast<int>(sizeof kSuite / sizeof kSuite[0]);
  const int last = argc > 4 ? std::atoi(argv[4]) : count - 1;
  const int seed_offset = argc > 5 ? std::atoi(argv[5]) : 0;
  if (seed_offset != 0) std::printf("scans of seed 31 + variant + %d (not the suite's own)\n", seed_offset);
  const std::string dir = (std::filesystem::temp_directory_path() / "orderband-mismatch-bench").string();
  std::map<int, std::array<Row, 2>> rows;
  for (int v = first; v <= last && v < count; ++v) {
    const Variant& var = kSuite[v];
    const SuiteScan run = render_suite_scan(v, side, counts, 0.0, seed_offset, dir);
    const SynthScenario& scenario = run.scenario;
    const ScanConfig& config = run.config;
    const OrientationResults& ori = run.ori;
    const std::vector<float>& truth = run.truth;
    const ScanGrid& grid = config.grid;
    double truth_mean = 0;
    for (float t : truth) truth_mean += t / truth.size();
    std::vector<Rotation> grain_orientations;
    for (int g = 0; g < ori.grains.count(); ++g) grain_orientations.push_back(ori.grains.mean[g]);
    const InformationLimit limit = information_limit(scenario, grain_orientations);
    // With ORDERBAND_BENCH_SPHERE_REFERENCE=1 the many-beam variants take the renderer's own spheres
    // as the estimators' reference instead of the kinematic model (self-consistency for the
    // model-led estimator; the learned one takes geometry and its first guess from them).
    const ManyBeamSpheres reference = std::getenv("ORDERBAND_BENCH_SPHERE_REFERENCE")
                                          ? many_beam_spheres(scenario, load_phases(scenario.phases), "mismatch_bench")
                                          : ManyBeamSpheres{};
    for (int e = 0; e < 2; ++e) {
      FractionSpec spec;
      spec.estimator = e ? FractionEstimator::learned : FractionEstimator::profile;
      spec.reference_spheres = reference.maps();
      spec.reference_sphere_contrast = scenario.many_beam.contrast;
      const auto t0 = std::chrono::steady_clock::now();
      const FractionResults fr = ordered_fraction_scan(read_scan_inputs(config, InputHashing::skip), ori, spec);
      const double sec = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
      Row& row = rows[v][e];
      row.rate = grid.count() / sec;
      row.limit = limit;
      row.two_phases = fr.two_phases;
      // Pure points (truth 0 or 1, all neighbours of the same phase) and classification.
      size_t inner = 0, correct = 0;
      double s[2] = {0, 0}, ss[2] = {0, 0}, c[2] = {0, 0}, sum = 0, measured = 0;
      double si[2] = {0, 0}, ssi[2] = {0, 0}, ci[2] = {0, 0};  // the same, no other grain next to the point
      std::map<int, std::array<double, 6>> by_grain;           // per grain and class: sum, sum of squares, count
      for (size_t k = 0; k < grid.count(); ++k) {
        if (fr.reason[k]) continue;
        sum += fr.raw[k], measured += 1;
        const bool t = truth[k] >= 0.5;
        bool boundary = false, other_grain = false;
        for (const GridPoint& nb : grid.neighbours(grid.point(k), 8)) {
          boundary = boundary || ((truth[grid.index(nb)] >= 0.5) != t);
          other_grain = other_grain || ori.grains.id[grid.index(nb)] != ori.grains.id[k];
        }
        if (boundary) continue;
        ++inner;
        correct += (fr.fraction[k] >= 0.5) == t;
        if (truth[k] > 0.02 && truth[k] < 0.98 && var.tertiary == 0) continue;
        s[t] += fr.raw[k], ss[t] += fr.raw[k] * fr.raw[k], c[t] += 1;
        if (!other_grain) si[t] += fr.raw[k], ssi[t] += fr.raw[k] * fr.raw[k], ci[t] += 1;
        auto& bg = by_grain[ori.grains.id[k]];
        bg[3 * t] += fr.raw[k], bg[3 * t + 1] += fr.raw[k] * fr.raw[k], bg[3 * t + 2] += 1;
      }
      // Within grains: the class difference averaged over grains that hold both classes (weighted
      // by the harmonic count), the spread about each grain's own class means.
      double diff = 0, weight = 0, within = 0, dof = 0;
      for (const auto& [g, bg] : by_grain) {
        for (int t = 0; t < 2; ++t)
          if (bg[3 * t + 2] > 1)
            within += bg[3 * t + 1] - bg[3 * t] * bg[3 * t] / bg[3 * t + 2], dof += bg[3 * t + 2] - 1;
        if (bg[2] < 5 || bg[5] < 5) continue;
        const double h = bg[2] * bg[5] / (bg[2] + bg[5]);
        diff += h * (bg[3] / bg[5] - bg[0] / bg[2]), weight += h;
      }
      row.d_prime_in_grains = weight > 0 && dof > 0 ? diff / weight / std::sqrt(within / dof) : std::nan("");
      // Per grain: the mean f of its pure matrix points against the tertiary truth, and for grains
      // that are mostly ordered (the primary particle with its own orientation) the grain's mean f.
      const int grains = ori.grains.count();
      std::vector<double> gm(grains + 1, 0.0), gn(grains + 1, 0.0), gt(grains + 1, 0.0), ga(grains + 1, 0.0),
          gc(grains + 1, 0.0), gf(grains + 1, 0.0);
      for (size_t k = 0; k < grid.count(); ++k) {
        const int g = ori.grains.id[k];
        if (fr.reason[k] || g <= 0 || g > grains) continue;
        gt[g] += truth[k] >= 0.5, ga[g] += fr.raw[k], gc[g] += 1, gf[g] += truth[k];
        if (truth[k] <= var.tertiary + 0.02) gm[g] += fr.raw[k], gn[g] += 1;
      }
      const bool detail = std::getenv("ORDERBAND_BENCH_DETAIL") != nullptr;
      for (int g = 1; g <= grains; ++g) {
        if (detail)
          std::fprintf(stderr, "  %s grain %d: %4.0f points, truth %.3f, mean f %.3f, pure matrix %4.0f at %+.3f\n",
                       e ? "learned" : "model-led", g, gc[g], gc[g] > 0 ? gf[g] / gc[g] : 0.0,
                       gc[g] > 0 ? ga[g] / gc[g] : 0.0, gn[g], gn[g] > 0 ? gm[g] / gn[g] : 0.0);
        if (gc[g] < 20) continue;
        if (gt[g] / gc[g] > 0.5 && (std::isnan(row.primary) || ga[g] / gc[g] < row.primary))
          row.primary = ga[g] / gc[g], row.primary_truth = gf[g] / gc[g];
        else if (gn[g] >= 20)
          row.worst_grain_matrix = std::max(row.worst_grain_matrix, std::abs(gm[g] / gn[g] - var.tertiary));
      }
      row.area_error = sum / measured - truth_mean;
      row.subresolution_error = fr.subresolution_fraction - var.tertiary;
      row.classification = 100.0 * correct / inner;
      row.d_prime = d_prime_of(s, ss, c);
      row.d_prime_one_lattice = d_prime_of(si, ssi, ci);
      row.matrix = s[0] / c[0], row.particle = s[1] / c[1];
    }
    std::fprintf(stderr, "variant %d (%s) done\n", v, var.name);
  }
  for (int e = 0; e < 2; ++e) {
    std::printf("\n%s estimator, %d x %d points, %.0f counts/px, 60 x 60 px, found orientations\n",
                e ? "learned (data-led)" : "model-led (profile)", side, side, counts);
    std::printf("%-28s %9s %8s %7s %7s %7s %7s %7s %7s %6s %6s %6s %6s %6s %6s %6s %6s %7s %s\n", "variant", "area err",
                "class %", "matrix", "partic.", "|grain|", "primary", "(truth)", "sub-res", "d'", "limit", "ratio",
                "shape", "ratio", "in gr.", "1 lat.", "ratio", "pts/s", "phases");
    for (const auto& [v, pair] : rows) {
      const Row& r = pair[e];
      std::printf(
          "%-28s %+9.3f %8.1f %7.3f %7.3f %7.3f %7.3f %7.3f %+7.3f %6.1f %6.1f %5.0f%% %6.1f %5.0f%% %6.1f %6.1f "
          "%5.0f%% "
          "%7.0f %s\n",
          kSuite[v].name, r.area_error, r.classification, r.matrix, r.particle, r.worst_grain_matrix, r.primary,
          r.primary_truth, r.subresolution_error, r.d_prime, r.limit.full, 100 * r.d_prime / r.limit.full,
          r.limit.shape, 100 * r.d_prime / r.limit.shape, r.d_prime_in_grains, r.d_prime_one_lattice,
          100 * r.d_prime_one_lattice / r.limit.shape, r.rate, r.two_phases ? "two" : "one");
    }
    // The suite's spread: the systematic uncertainty of the area fraction from model mismatch
    // (mismatch_systematic.hpp keeps the figures of the last full run).
    double sum_sq = 0, worst = 0;
    int within = 0;
    for (const auto& [v, pair] : rows) {
      const double err = pair[e].area_error;
      sum_sq += err * err, worst = std::max(worst, std::abs(err)), within += std::abs(err) <= 0.03;
    }
    std::printf("area error over %zu variants: RMS %.3f, largest %.3f, within ±0.03 on %d\n", rows.size(),
                std::sqrt(sum_sq / std::max<size_t>(rows.size(), 1)), worst, within);
  }
  print_with_free_layer(first, last, side, counts, seed_offset, dir);
  std::filesystem::remove_all(dir);
  return 0;
}
