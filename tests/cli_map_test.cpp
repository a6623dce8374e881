// `orderband map` and `orderband screen` end to end: numbers against truth, resume after a kill,
// thread-count independence, hash-based reuse, and the report in a headless browser.
#include <gtest/gtest.h>

#include <signal.h>
#include <sys/wait.h>
#include <cctype>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <random>
#include <sstream>
#include <system_error>

#include "orderband/error.hpp"
#include "orderband/mismatch_systematic.hpp"
#include "orderband/npy_io.hpp"
#include "orderband/orientation_csv.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/screen_folder.hpp"
#include "orderband/synth.hpp"
#include "orderband/synth_scan.hpp"
#include "orderband/version.hpp"
#include "test_support.hpp"

namespace fs = std::filesystem;

namespace orderband {
namespace {

std::string slurp(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

std::map<std::string, std::string> folder_contents(const std::string& dir) {
  std::map<std::string, std::string> files;
  for (const auto& e : fs::directory_iterator(dir))
    if (e.is_regular_file()) files[e.path().filename().string()] = slurp(e.path().string());
  return files;
}

/// A synthetic scan (not the demo): side × side points, 60 × 60 px, 5,000 counts per pixel.
std::string make_scan(const std::string& dir, int side, int seed, const std::string& extra = "") {
  std::ofstream(dir + "/s.toml")
      << "[scenario]\nseed = " << seed << "\n[scan]\nrows = " << side << "\ncols = " << side
      << "\nstep_um = 0.025\n[detector]\nwidth_px = 60\nheight_px = 60\npc_px = [30.0, 18.0]\n"
         "distance_px = 45.0\n[grains]\ncount = 2\n[secondary]\narea_fraction = 0.3\n"
         "distribution = \"lognormal\"\nmedian_diameter_um = 0.15\nsigma_ln = 0.2\n"
         "[tertiary]\nfraction = 0.05\n"
      << extra;
  write_synthetic_scan(read_synth_scenario(dir + "/s.toml"), dir + "/scan", "test");
  return dir + "/scan/scan.toml";
}

class MapRun : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new std::string(test::make_temp_dir("map"));
    scan_ = new std::string(make_scan(*dir_, 40, 31));
    const auto r = test::run_orderband("map " + *scan_ + " -o " + *dir_ + "/out --quiet");
    ASSERT_EQ(r.exit_code, 0) << r.err;
  }
  static void TearDownTestSuite() {
    fs::remove_all(*dir_);
    delete dir_, delete scan_;
  }
  static std::string* dir_;
  static std::string* scan_;
};
std::string* MapRun::dir_ = nullptr;
std::string* MapRun::scan_ = nullptr;

TEST(MapSizes, SecondaryThreeDimensionalMeanFromSectionsTruncatedAtTheDetectionLimit) {
  // 80 × 80 points of 25 nm (4 µm²), log-normal secondary γ′ (3-D mean 0.153 µm, 30 %), tertiary
  // 5 % below resolution, 5,000 counts. The 3-D mean from the resolved sections lands within 15 %
  // of the truth and its 95 % interval holds it (measured 0.155, 0.143–0.167); no particle is
  // counted as tertiary; the detection limit lies between the ECD of two cells and the secondary
  // median (measured 0.073 µm, components of 6 points).
  const std::string dir = test::make_temp_dir("sizes");
  std::ofstream(dir + "/s.toml") << "[scenario]\nseed = 41\n[scan]\nrows = 80\ncols = 80\nstep_um = 0.025\n"
                                    "[detector]\nwidth_px = 60\nheight_px = 60\npc_px = [30.0, 18.0]\n"
                                    "distance_px = 45.0\n[grains]\ncount = 2\n[secondary]\narea_fraction = 0.3\n"
                                    "distribution = \"lognormal\"\nmedian_diameter_um = 0.15\nsigma_ln = 0.2\n"
                                    "[tertiary]\nfraction = 0.05\n";
  write_synthetic_scan(read_synth_scenario(dir + "/s.toml"), dir + "/scan", "test");
  const auto r = test::run_orderband("map " + dir + "/scan/scan.toml -o " + dir + "/out --quiet --no-mean-spheres");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto s = nlohmann::json::parse(slurp(dir + "/out/summary.json"));
  const auto t = nlohmann::json::parse(slurp(dir + "/scan/truth.json"));
  const double truth = t["scenario"]["secondary_mean_diameter_3d_um"];
  const std::string preferred = s["secondary_3d"]["preferred"];
  ASSERT_FALSE(preferred.empty());
  const auto& fit = s["secondary_3d"][preferred];
  EXPECT_NEAR(fit["mean_diameter_um"].get<double>(), truth, 0.15 * truth) << preferred;
  EXPECT_LE(fit["mean_diameter_ci95_um"][0].get<double>(), truth);
  EXPECT_GE(fit["mean_diameter_ci95_um"][1].get<double>(), truth);
  // The resolved sections, counted as the truth is counted (in the field, off the border, at or
  // above the detection limit): touching particles split apart, the count within 15 % and the mean
  // ECD within 10 % (measured 55 vs 59 and 0.136 vs 0.130 µm; without the split 39 and 0.144).
  const auto& truth_secondary = s["truth"]["classes"]["secondary"];
  const double true_count = truth_secondary["sections_resolved"].get<double>();
  EXPECT_NEAR(s["classes"]["secondary"]["count"].get<double>(), true_count, 0.15 * true_count);
  const double true_ecd = truth_secondary["mean_ecd_resolved_um"].get<double>();
  EXPECT_NEAR(s["classes"]["secondary"]["mean_ecd_um"].get<double>(), true_ecd, 0.10 * true_ecd);
  EXPECT_NE(slurp(dir + "/out/report.html").find("Truth beside measurement"), std::string::npos);
  EXPECT_EQ(s["classes"]["tertiary"]["count"].get<int>(), 0);
  EXPECT_FALSE(s["classes"]["tertiary"]["counted"].get<bool>());
  const double limit = s["detection_limit"]["section_diameter_um"];
  EXPECT_GT(limit, 2 * std::sqrt(2 * 0.025 * 0.025 / M_PI));
  EXPECT_LT(limit, 0.15);
  EXPECT_NE(slurp(dir + "/out/classes.csv").find("lognormal_sigma,counted\n"), std::string::npos);
  fs::remove_all(dir);
}

TEST_F(MapRun, SummaryAgreesWithTruth) {
  const auto s = nlohmann::json::parse(slurp(*dir_ + "/out/summary.json"));
  const auto t = nlohmann::json::parse(slurp(*dir_ + "/scan/truth.json"));
  // 1,600 points: the default ("auto") runs the learned estimator, whose zero is each grain's
  // matrix. So the area fraction is the resolved ordered area, the truth less its tertiary share
  // (0.05 of the matrix, 0.033 here), within the ±0.03 issue A asks of the learned estimator on
  // every renderer variant (measured +0.023: on this renderer its particles read 2–3 % high and
  // matrix beside another grain a little above zero, as on the mismatch suite's default variant,
  // +0.029 there).
  EXPECT_EQ(s["fraction_estimator"]["requested"], "auto");
  EXPECT_EQ(s["fraction_estimator"]["used"], "learned");
  const double resolved_truth =
      t["ordered_area_fraction"].get<double>() - t["classes"]["tertiary"]["area_fraction"].get<double>();
  EXPECT_NEAR(s["ordered_area_fraction"].get<double>(), resolved_truth, 0.03);
  EXPECT_FALSE(s["subresolution_measured"].get<bool>());
  // The report says which estimator ran and why, and that the tertiary class's area leaves out
  // ordering finer than the beam inside the matrix.
  const std::string report = slurp(*dir_ + "/out/report.html");
  EXPECT_NE(report.find("chosen for a scan of at least 1000 points"), std::string::npos);
  EXPECT_NE(report.find("inside the matrix is not measured"), std::string::npos);
  // The pattern centre, given right, stays within a few hundredths of a pixel.
  EXPECT_NEAR(s["pattern_centre"]["pc_px"][0].get<double>(), 30.0, 0.05);
  EXPECT_NEAR(s["pattern_centre"]["pc_px"][1].get<double>(), 18.0, 0.05);
  EXPECT_NEAR(s["pattern_centre"]["distance_px"].get<double>(), 45.0, 0.05);
  EXPECT_LE(s["ci95"]["low"].get<double>(), s["ordered_area_fraction"].get<double>());
  EXPECT_GE(s["ci95"]["high"].get<double>(), s["ordered_area_fraction"].get<double>());
  // The systematic uncertainty is the learned estimator's, from the mismatch suite (the model-led
  // one's, 0.802, were the choice taken from the options rather than from the estimator that ran).
  EXPECT_EQ(s["systematic_uncertainty"]["model_mismatch_rms"].get<double>(), mismatch_systematic("learned").rms);
  EXPECT_LT(s["systematic_uncertainty"]["model_mismatch_rms"].get<double>(), 0.1);
  EXPECT_EQ(s["systematic_uncertainty"]["variants"].get<int>(), 16);
  EXPECT_EQ(s["systematic_uncertainty"]["layouts_per_variant"].get<int>(), 3);
  EXPECT_EQ(s["systematic_uncertainty"]["scans_within_0_03"].get<int>(), mismatch_systematic("learned").within_003);
  EXPECT_EQ(s["points_measured"].get<size_t>(), 1600u);
  for (const char* key : {"area_fraction", "number_density_per_um2", "mean_ecd_um", "count"})
    EXPECT_TRUE(s["classes"]["secondary"].contains(key)) << key;
  EXPECT_EQ(s["version"], kVersion);
  EXPECT_NE(s["command_line"].get<std::string>().find("map " + *scan_), std::string::npos);
  EXPECT_EQ(s["input_hashes"]["patterns"]["fnv1a64"].get<std::string>().size(), 16u);
  for (const char* f :
       {"fraction_map.png", "ordered_mask.png", "orientation_map.png", "ordered_fraction.npy", "particles.csv",
        "classes.csv", "band_profiles.svg", "family_diagnostics.svg", "size_histogram.svg", "mean_sphere_ordered.png",
        "mean_sphere_disordered.png", "mean_sphere_difference.png", "report.html", "orientations.csv",
        "orient_summary.json"})  // everything orient writes too
    EXPECT_TRUE(fs::exists(*dir_ + "/out/" + f)) << f;
  EXPECT_FALSE(fs::exists(*dir_ + "/out/.resume"));  // cleared after a complete run
}

TEST(MapLearned, ADisorderedReferenceRegionMeasuresTheTertiaryShare) {
  // The fixture's scenario with a γ′-free layer of 12 rows along the first rows (as beneath an
  // oxidised edge), its first 10 rows given in the scan description as the disordered region and
  // no ordered region: the learned estimator's zero is the region's, so the 5 % tertiary γ′ is
  // measured (issue Wave 2 · A, item 4). Grain 1 lies almost wholly in the layer; the zero is set
  // grain by grain. Measured: sub-resolution 0.028 (82 region points in the other grain set its
  // zero: a standard error of about 0.03), area +0.001 against the truth; with one global offset
  // from the region's mean, −0.062 and −0.054. The summary then carries no model-mismatch systematic (the suite did not
  // try this set-up), and the report names the end members.
  const std::string dir = test::make_temp_dir("map-region");
  const std::string scan = make_scan(dir, 40, 31, "[free_layer]\ndepth_um = 0.3\n");
  std::string text = slurp(scan);
  const std::string model = "end_members = 'model'";
  ASSERT_NE(text.find(model), std::string::npos);
  text.replace(text.find(model), model.size(), "end_members = 'regions'\ndisordered_regions = [[0, 0, 9, 39]]");
  std::ofstream(scan) << text;
  const auto r = test::run_orderband("map " + scan + " -o " + dir + "/out --quiet --no-mean-spheres");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto s = nlohmann::json::parse(slurp(dir + "/out/summary.json"));
  const auto t = nlohmann::json::parse(slurp(dir + "/scan/truth.json"));
  EXPECT_EQ(s["fraction_estimator"]["used"], "learned");
  EXPECT_TRUE(s["subresolution_measured"].get<bool>());
  EXPECT_NEAR(s["subresolution_ordered_fraction"].get<double>(), 0.05, 0.03);
  EXPECT_NEAR(s["ordered_area_fraction"].get<double>(), t["ordered_area_fraction"].get<double>(), 0.03);
  EXPECT_TRUE(s["systematic_uncertainty"].is_null());
  EXPECT_NE(slurp(dir + "/out/report.html").find("0 at the disordered reference region (400 points"),
            std::string::npos);
  // Each grain's verdict: both phases, or one phase with what named it.
  int both = 0;
  for (const auto& g : s["grain_fractions"]) {
    const std::string phases = g["phases"], named_by = g["named_by"];
    both += phases == "two_components";
    EXPECT_EQ(named_by == "none", phases == "two_components" || phases == "not_placed") << "grain " << g["id"];
  }
  EXPECT_GE(both, 1);
  fs::remove_all(dir);
}

TEST(MapModelLed, SubResolutionFractionAndEachGrainsMatrixOnItsOwnModel) {
  // `--estimator model` on the fixture's scenario (rendered with the model's own band intensities,
  // so this is self-consistency, not accuracy): the area fraction with its tertiary share and the
  // sub-resolution fraction within ±0.02 of the truth (step 6), each grain's matrix at the
  // scenario's 5 % whatever its orientation, and the model-led systematic uncertainty from the
  // mismatch suite far wider than the statistical interval (measured 0.802 against a half-width of
  // 0.068).
  const std::string dir = test::make_temp_dir("map-model");
  const std::string scan = make_scan(dir, 40, 31);
  const auto r = test::run_orderband("map " + scan + " -o " + dir + "/out --quiet --estimator model --no-mean-spheres");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto s = nlohmann::json::parse(slurp(dir + "/out/summary.json"));
  const auto t = nlohmann::json::parse(slurp(dir + "/scan/truth.json"));
  EXPECT_EQ(s["fraction_estimator"]["used"], "profile");
  EXPECT_NEAR(s["ordered_area_fraction"].get<double>(), t["ordered_area_fraction"].get<double>(), 0.02);
  EXPECT_TRUE(s["subresolution_measured"].get<bool>());
  EXPECT_NEAR(s["subresolution_ordered_fraction"].get<double>(), 0.05, 0.02);
  EXPECT_EQ(slurp(dir + "/out/report.html").find("inside the matrix is not measured"), std::string::npos);
  int checked = 0;
  for (const auto& g : s["grain_fractions"]) {
    EXPECT_FALSE(g.contains("phases")) << "the first split's verdict is the learned estimator's alone";
    if (g["matrix_points"].get<int>() < 100) continue;
    EXPECT_NEAR(g["matrix_mean_fraction"].get<double>(), 0.05, 0.02) << "grain " << g["id"];
    ++checked;
  }
  EXPECT_GE(checked, 1);
  const double systematic = s["systematic_uncertainty"]["model_mismatch_rms"].get<double>();
  EXPECT_GT(systematic, 5 * (s["ci95"]["high"].get<double>() - s["ci95"]["low"].get<double>()) / 2);
  fs::remove_all(dir);
}

TEST_F(MapRun, ResumesAfterAKillWithIdenticalOutputs) {
  const auto reference = folder_contents(*dir_ + "/out");
  const std::string out = *dir_ + "/out";
  fs::remove_all(out);
  // Run the same command, kill it once some rows are committed. A slow build (the sanitizers on a
  // loaded machine) only makes the wait longer, the 10-minute cap is the test's own timeout.
  const std::string cmd = std::string(ORDERBAND_BINARY) + " map " + *scan_ + " -o " + out + " --quiet";
  const test::InterruptedRun run =
      test::interrupt_after_rows(cmd, out + "/.resume", "orient", 8, [](int pid) { return kill(pid, SIGKILL) == 0; });
  ASSERT_FALSE(run.exited) << "the run finished before it could be interrupted";
  ASSERT_TRUE(run.stopped) << "no 8 rows committed within 10 minutes";
  ASSERT_FALSE(fs::exists(out + "/summary.json"));
  const auto r = test::run_orderband("map " + *scan_ + " -o " + out + " --quiet");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto resumed = folder_contents(out);
  ASSERT_EQ(resumed.size(), reference.size());
  for (const auto& [name, bytes] : reference)
    EXPECT_TRUE(resumed.at(name) == bytes) << name << " differs after resuming";
}

TEST_F(MapRun, SameResultsWithOneAndTwoThreads) {
  const std::string a = *dir_ + "/t1", b = *dir_ + "/t2";
  ASSERT_EQ(test::run_orderband("map " + *scan_ + " -o " + a + " --quiet --threads 1").exit_code, 0);
  ASSERT_EQ(test::run_orderband("map " + *scan_ + " -o " + b + " --quiet --threads 2").exit_code, 0);
  for (const auto& [name, bytes] : folder_contents(a)) {
    const std::string other = slurp(b + "/" + name);
    if (name.size() > 4 && name.substr(name.size() - 4) == ".npy") {
      EXPECT_TRUE(bytes == other) << name;
    } else if (name.size() > 4 && name.substr(name.size() - 4) == ".csv") {
      EXPECT_EQ(bytes.substr(bytes.find('\n')), other.substr(other.find('\n'))) << name;  // all but the provenance line
    } else if (name == "summary.json") {
      auto ja = nlohmann::json::parse(bytes), jb = nlohmann::json::parse(other);
      ja.erase("command_line"), jb.erase("command_line");
      EXPECT_EQ(ja, jb);
    }
  }
}

TEST_F(MapRun, ResultsFileTablesAndTiffsReadBackInOtherTools) {
  // h5py reads every array of results.h5 equal to its .npy file, scikit-image every float TIFF;
  // the tables have the CSV files' rows and points.csv one row per point.
  const auto r = test::run_reference_script("results_check.py", *dir_ + "/out");
  EXPECT_EQ(r.exit_code, 0) << r.out << r.err;
  EXPECT_NE(r.out.find("ok 12 1600"), std::string::npos) << r.out;  // 12 arrays, 40 x 40 points
}

TEST_F(MapRun, OrientationTableNamesThePhaseTheFractionShows) {
  const ScanConfig config = read_scan_config(*scan_);
  std::ifstream in(*dir_ + "/out/orientations.csv");
  const OrientationTable table = read_orientation_csv(in, config.grid, "orientations.csv");
  const std::vector<float> f = read_npy(*dir_ + "/out/ordered_fraction.npy").values;
  const nlohmann::json summary = nlohmann::json::parse(slurp(*dir_ + "/out/summary.json"));
  const std::string ordered = summary["parameters"]["phases"]["ordered"],
                    disordered = summary["parameters"]["phases"]["disordered"];
  size_t ordered_points = 0, checked = 0;
  for (size_t k = 0; k < f.size(); ++k) {
    if (!table.orientations[k]) continue;
    EXPECT_EQ(table.phases[k], f[k] >= 0.5f ? ordered : disordered) << k;
    ordered_points += table.phases[k] == ordered;
    ++checked;
  }
  EXPECT_GT(checked, f.size() / 2);
  EXPECT_GT(ordered_points, checked / 10);  // the scan has 30 % secondary particles: both phases appear
}

TEST_F(MapRun, ReportLoadsInAHeadlessBrowser) {
  // Debian's chromium (installed by scripts/install-deps.sh): every image of report.html loads and
  // the page logs no console error; a screenshot is taken.
  ASSERT_TRUE(fs::exists("/usr/bin/chromium")) << "chromium is missing: run scripts/install-deps.sh";
  const std::string profile = *dir_ + "/chromium-profile";
  const std::string flags =
      "--headless --no-sandbox --disable-gpu --no-first-run --disable-background-networking "
      "--disable-component-update --disable-sync --user-data-dir=" +
      profile + " --virtual-time-budget=5000 ";
  const std::string page = "file://" + *dir_ + "/out/report.html";
  const std::string dom = *dir_ + "/dom.html", log = *dir_ + "/chromium.log";
  const int rc = std::system(("timeout 120 /usr/bin/chromium " + flags + "--enable-logging=stderr --v=0 --dump-dom " +
                              page + " >" + dom + " 2>" + log)
                                 .c_str());
  ASSERT_EQ(WEXITSTATUS(rc), 0) << slurp(log);
  const std::string html = slurp(dom);
  const auto at = html.find("data-images-loaded=\"");
  ASSERT_NE(at, std::string::npos) << "the page's load script did not run";
  const std::string value = html.substr(at + 20, html.find('"', at + 20) - at - 20);
  const auto slash = value.find('/');
  EXPECT_EQ(value.substr(0, slash), value.substr(slash + 1)) << "images loaded / images: " << value;
  EXPECT_GE(std::stoi(value.substr(slash + 1)), 6);
  const std::string console = slurp(log);
  EXPECT_EQ(console.find("Uncaught"), std::string::npos) << console;
  EXPECT_EQ(console.find(":ERROR:CONSOLE"), std::string::npos) << console;
}

TEST_F(MapRun, EveryChartOfTheReportIsShownWhole) {
  // Every inline chart once defined the same clip path id, and the browser clipped each chart to the
  // first one's box (the size histogram lost its large bins). A copy of the page carries a script
  // that reports, per chart, its box as laid out, its own width and height, and whether every clip
  // path it uses is defined inside itself and within its own size.
  ASSERT_TRUE(fs::exists("/usr/bin/chromium")) << "chromium is missing: run scripts/install-deps.sh";
  std::string html = slurp(*dir_ + "/out/report.html");
  const std::string probe = R"(<script>
window.addEventListener('load', () => {
  const rows = [...document.querySelectorAll('svg')].filter(s => !s.parentElement.closest('svg'))
    .map(s => {
      const box = s.getBoundingClientRect();
      const w = parseFloat(s.getAttribute('width')), h = parseFloat(s.getAttribute('height'));
      let own = 1;
      s.querySelectorAll('[clip-path]').forEach(e => {
        const id = e.getAttribute('clip-path').match(/url\(#([^)]+)\)/)[1];
        const clips = document.querySelectorAll('clipPath[id="' + id + '"]');
        const c = clips.length === 1 ? clips[0] : null;
        const r = c ? c.querySelector('rect') : null;
        if (!r || !s.contains(c) || +r.getAttribute('x') + +r.getAttribute('width') > w ||
            +r.getAttribute('y') + +r.getAttribute('height') > h) own = 0;
      });
      return [box.width.toFixed(1), box.height.toFixed(1), w, h, own].join(',');
    });
  document.body.setAttribute('data-chart-boxes', rows.join(';'));
});
</script>)";
  html.insert(html.rfind("</body>"), probe);
  const std::string copy = *dir_ + "/report-probe.html", dom = *dir_ + "/probe-dom.html";
  std::ofstream(copy) << html;
  const std::string flags =
      "--headless --no-sandbox --disable-gpu --no-first-run --disable-background-networking "
      "--disable-component-update --disable-sync --user-data-dir=" +
      *dir_ + "/chromium-profile-2 --virtual-time-budget=5000 --window-size=1200,2000 ";
  const int rc = std::system(
      ("timeout 120 /usr/bin/chromium " + flags + "--dump-dom file://" + copy + " >" + dom + " 2>/dev/null").c_str());
  ASSERT_EQ(WEXITSTATUS(rc), 0);
  const std::string page = slurp(dom);
  const auto at = page.find("data-chart-boxes=\"");
  ASSERT_NE(at, std::string::npos) << "the probe did not run";
  std::istringstream rows(page.substr(at + 18, page.find('"', at + 18) - at - 18));
  int charts = 0;
  for (std::string row; std::getline(rows, row, ';');) {
    double bw = 0, bh = 0, w = 0, h = 0;
    int own = 0;
    ASSERT_EQ(std::sscanf(row.c_str(), "%lf,%lf,%lf,%lf,%d", &bw, &bh, &w, &h, &own), 5) << row;
    EXPECT_NEAR(bw, w, 0.5) << "chart " << charts << ": laid out " << bw << " px wide, drawn for " << w;
    EXPECT_NEAR(bh, h, 0.5) << "chart " << charts << ": laid out " << bh << " px high, drawn for " << h;
    EXPECT_EQ(own, 1) << "chart " << charts << " uses a clip path that is not its own";
    ++charts;
  }
  // Band profiles, the family chart and the size histogram at least.
  EXPECT_GE(charts, 3);
}

/// A trials description of two trials at 760 °C: A (4 h, scan `a`) and B (16 h, scan `b`).
void write_two_trials(const std::string& path, const std::string& a, const std::string& b) {
  std::ofstream(path) << "[screen]\ntitle = \"test\"\n[target]\nordered_fraction = [0.2, 0.4]\n"
                         "[[trial]]\nlabel = \"A\"\nscan = \""
                      << a << "\"\ntemperature_c = 760\ntime_h = 4\n[[trial]]\nlabel = \"B\"\nscan = \"" << b
                      << "\"\ntemperature_c = 760\ntime_h = 16\n";
}

TEST(ScreenShare, TrialsOfOneScenarioStayTogetherAndTheLoadIsEven) {
  // Trials 0–6: scans a, b, c, then scenario X twice, scan d, scenario Y. With 3 processes: a → 0,
  // b → 1, c → 2, X → 0 (both of its trials: its cached scan is made by one process), d → 1 (the
  // process with the fewest), Y → 2. One process maps everything.
  TrialsConfig t;
  for (const char* source : {"a", "b", "c", "X", "X", "d", "Y"}) {
    Trial trial;
    (std::isupper(static_cast<unsigned char>(source[0])) ? trial.scenario : trial.scan) = source;
    t.trials.push_back(trial);
  }
  EXPECT_EQ(trial_owners(t, 3), (std::vector<int>{0, 1, 2, 0, 0, 1, 2}));
  EXPECT_EQ(trial_owners(t, 1), (std::vector<int>(7, 0)));
  // More processes than trials: the first ones get one each, the rest none.
  EXPECT_EQ(trial_owners(t, 8), (std::vector<int>{0, 1, 2, 3, 3, 4, 5}));
  EXPECT_THROW(trial_owners(t, 0), Error);
}

TEST(CliScreen, ReusesUnchangedTrialsAndRecomputesAChangedOne) {
  const std::string dir = test::make_temp_dir("screen");
  fs::create_directories(dir + "/a"), fs::create_directories(dir + "/b");
  const std::string a = make_scan(dir + "/a", 16, 41), b = make_scan(dir + "/b", 16, 42);
  write_two_trials(dir + "/trials.toml", a, b);
  const std::string cmd = "screen " + dir + "/trials.toml -o " + dir + "/out --quiet";
  auto r = test::run_orderband(cmd);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::string log = slurp(dir + "/out/screen_log.txt");
  EXPECT_NE(log.find("trial A: computed"), std::string::npos) << log;
  EXPECT_NE(log.find("trial B: computed"), std::string::npos) << log;
  r = test::run_orderband(cmd);
  log = slurp(dir + "/out/screen_log.txt");
  EXPECT_NE(log.find("trial A: reused"), std::string::npos) << log;
  EXPECT_NE(log.find("trial B: reused"), std::string::npos) << log;
  // Change trial B's patterns (one sample): B is computed again, A is reused.
  {
    std::fstream f(dir + "/b/scan/patterns.raw", std::ios::in | std::ios::out | std::ios::binary);
    f.seekp(1000);
    const char byte = 7;
    f.write(&byte, 1);
  }
  r = test::run_orderband(cmd);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  log = slurp(dir + "/out/screen_log.txt");
  EXPECT_NE(log.find("trial A: reused"), std::string::npos) << log;
  EXPECT_NE(log.find("trial B: computed"), std::string::npos) << log;
  const auto j = nlohmann::json::parse(slurp(dir + "/out/comparison.json"));
  EXPECT_EQ(j["trials"].size(), 2u);
  EXPECT_EQ(j["ranking"].size(), 2u);
  EXPECT_TRUE(fs::exists(dir + "/out/report.html"));
  fs::remove_all(dir);
}

TEST(CliScreen, TrialsWhoseSubResolutionFractionWasNotMeasuredSaySo) {
  // Two 16 × 16 trials with tertiary γ′ 5 %: the default (model-led below 1,000 points) measures
  // their sub-resolution fraction and the report has no caution about it; with the learned
  // estimator its zero is the matrix, so comparison.csv leaves the field empty, comparison.json
  // gives null with `subresolution_measured` false, and the report names both trials.
  const std::string dir = test::make_temp_dir("screen-subres");
  fs::create_directories(dir + "/a"), fs::create_directories(dir + "/b");
  write_two_trials(dir + "/trials.toml", make_scan(dir + "/a", 16, 45), make_scan(dir + "/b", 16, 46));
  const std::string cmd = "screen " + dir + "/trials.toml --quiet --no-mean-spheres -o " + dir;
  ASSERT_EQ(test::run_orderband(cmd + "/model").exit_code, 0);
  const auto measured = nlohmann::json::parse(slurp(dir + "/model/comparison.json"));
  EXPECT_TRUE(measured["trials"][0]["subresolution_measured"].get<bool>());
  EXPECT_NEAR(measured["trials"][0]["subresolution_ordered_fraction"].get<double>(), 0.05, 0.05);
  EXPECT_EQ(slurp(dir + "/model/report.html").find("not in them"), std::string::npos);
  const auto r = test::run_orderband(cmd + "/learned --estimator learned");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const auto j = nlohmann::json::parse(slurp(dir + "/learned/comparison.json"));
  for (const auto& trial : j["trials"]) {
    EXPECT_FALSE(trial["subresolution_measured"].get<bool>());
    EXPECT_TRUE(trial["subresolution_ordered_fraction"].is_null());
  }
  const std::string csv = slurp(dir + "/learned/comparison.csv");
  const size_t row = csv.find("\nA,760,4,");
  ASSERT_NE(row, std::string::npos) << csv;
  // label, temperature, time, fraction, low, high, then the empty sub-resolution field.
  size_t field = row + 1;
  for (int comma = 0; comma < 6; ++comma) field = csv.find(',', field) + 1;
  EXPECT_EQ(csv[field], ',') << csv.substr(row, 120);
  EXPECT_NE(slurp(dir + "/learned/report.html").find("Ordered fractions of A, B: ordering finer than the beam"),
            std::string::npos);
  fs::remove_all(dir);
}

TEST(CliScreen, TheLibraryScreensAsTheCommandLineDoes) {
  // screen_to_folder with default options against `orderband screen` with default options: the
  // same run keys, the same comparison table (but for the command line in its first line), and
  // the structs hold what the files say.
  const std::string dir = test::make_temp_dir("screen-lib");
  fs::create_directories(dir + "/a"), fs::create_directories(dir + "/b");
  write_two_trials(dir + "/trials.toml", make_scan(dir + "/a", 16, 43), make_scan(dir + "/b", 16, 44));
  const auto r = test::run_orderband("screen " + dir + "/trials.toml -o " + dir + "/cli --quiet");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  std::vector<std::string> messages;
  ScreenProgress progress;
  progress.message = [&](const std::string& line) { messages.push_back(line); };
  const ScreenRun run = screen_to_folder(dir + "/trials.toml", dir + "/lib", MapOptions{}, "library", progress);
  EXPECT_EQ(run.computed, (std::vector<std::string>{"A", "B"}));
  EXPECT_TRUE(run.failed.empty());
  ASSERT_EQ(messages.size(), 2u);
  EXPECT_NE(messages[0].find("trial A: mapping"), std::string::npos) << messages[0];
  for (const char* label : {"A", "B"})
    EXPECT_EQ(slurp(dir + "/lib/" + label + "/run_key.txt"), slurp(dir + "/cli/" + label + "/run_key.txt"));
  auto without_first_line = [](const std::string& text) { return text.substr(text.find('\n') + 1); };
  const std::string table = without_first_line(slurp(dir + "/lib/comparison.csv"));
  EXPECT_EQ(table, without_first_line(slurp(dir + "/cli/comparison.csv")));
  const auto j = nlohmann::json::parse(slurp(dir + "/lib/comparison.json"));
  ASSERT_EQ(run.summaries.size(), 2u);
  ASSERT_EQ(run.comparison.ranking.size(), 2u);
  for (size_t i = 0; i < 2; ++i) {
    EXPECT_EQ(j["trials"][i]["ordered_area_fraction"].get<double>(), run.summaries[i].ordered_fraction.value);
    EXPECT_EQ(j["trials"][i]["classes"]["secondary"]["count"].get<int>(), run.summaries[i].secondary.count);
    EXPECT_EQ(j["trials"][i]["rank"].get<size_t>(), place_in(run.comparison.ranking, i).first);
  }
  EXPECT_EQ(run.report, dir + "/lib/report.html");
  fs::remove_all(dir);
}

TEST(CliScreen, AFailedTrialIsReportedAndTheOthersAreCompared) {
  // Trial B's pattern file lost its last kilobyte: B fails, A is still mapped and compared, the
  // failure is logged, listed in comparison.json and the report, and the exit code says so.
  const std::string dir = test::make_temp_dir("screen-fail");
  fs::create_directories(dir + "/a"), fs::create_directories(dir + "/b");
  const std::string a = make_scan(dir + "/a", 16, 41), b = make_scan(dir + "/b", 16, 42);
  fs::resize_file(dir + "/b/scan/patterns.raw", fs::file_size(dir + "/b/scan/patterns.raw") - 1024);
  write_two_trials(dir + "/trials.toml", a, b);
  const auto r = test::run_orderband("screen " + dir + "/trials.toml -o " + dir + "/out --quiet");
  EXPECT_EQ(r.exit_code, 1) << r.err;
  EXPECT_NE(r.err.find("trial B failed"), std::string::npos) << r.err;
  const std::string log = slurp(dir + "/out/screen_log.txt");
  EXPECT_NE(log.find("trial A: computed"), std::string::npos) << log;
  EXPECT_NE(log.find("trial B: failed"), std::string::npos) << log;
  const auto j = nlohmann::json::parse(slurp(dir + "/out/comparison.json"));
  ASSERT_EQ(j["trials"].size(), 1u);
  EXPECT_EQ(j["trials"][0]["label"], "A");
  ASSERT_EQ(j["failed_trials"].size(), 1u);
  EXPECT_EQ(j["failed_trials"][0]["label"], "B");
  EXPECT_NE(slurp(dir + "/out/report.html").find("Trial B failed"), std::string::npos);
  fs::remove_all(dir);
}

TEST(CliMap, NoUsablePointWritesASummaryThatSaysSoAndExitsOne) {
  // Patterns of pure Poisson noise: no point finds an orientation. map ended with "ASTM E562 needs
  // at least 2 fields" and wrote nothing.
  const std::string dir = test::make_temp_dir("map-unusable");
  std::mt19937 rng(4);
  std::poisson_distribution<int> counts(900);
  std::vector<uint16_t> data(4 * 5 * 40 * 40);
  for (auto& v : data) v = static_cast<uint16_t>(counts(rng));
  std::ofstream(dir + "/p.raw", std::ios::binary)
      .write(reinterpret_cast<const char*>(data.data()), static_cast<std::streamsize>(data.size() * 2));
  std::ofstream(dir + "/scan.toml") << "[scan]\nrows = 4\ncols = 5\nstep_um = 0.05\n"
                                       "[patterns]\nformat = \"raw\"\nfile = \"p.raw\"\nwidth_px = 40\nheight_px = 40\n"
                                       "[geometry]\npc_px = [20.0, 10.0]\ndistance_px = 40.0\n";
  const auto r = test::run_orderband("map " + dir + "/scan.toml -o " + dir + "/out --threads 2");
  EXPECT_EQ(r.exit_code, 1);
  const std::string last = r.err.substr(r.err.rfind("orderband map: error: "));
  EXPECT_EQ(last.rfind("orderband map: error: no point of the scan gave an ordered fraction (20 points: 0 unusable "
                       "patterns, 20 without an orientation, 0 without band contrast, 0 in grains too small to "
                       "place), so nothing could be measured; ",
                       0),
            0u)
      << r.err;
  EXPECT_EQ(std::count(last.begin(), last.end(), '\n'), 1) << last;
  // The folder holds the summary alone (no half-written maps or tables, no resume rows; the lock
  // file every run leaves is hidden), with provenance.
  std::vector<std::string> files;
  for (const auto& e : fs::directory_iterator(dir + "/out"))
    if (e.path().filename() != ".lock") files.push_back(e.path().filename().string());
  EXPECT_EQ(files, std::vector<std::string>{"summary.json"});
  const auto j = nlohmann::json::parse(slurp(dir + "/out/summary.json"));
  EXPECT_EQ(j["version"], kVersion);
  EXPECT_EQ(j["points"]["measured"], 0);
  EXPECT_EQ(j["points"]["total"], 20);
  EXPECT_EQ(j["points"]["not_measured_by_reason"]["no_orientation"], 20);
  EXPECT_NE(j["result"].get<std::string>().find("no point of the scan gave an ordered fraction"), std::string::npos);
  EXPECT_TRUE(j["parameters"].contains("fraction"));
  fs::remove_all(dir);
}

}  // namespace
}  // namespace orderband
