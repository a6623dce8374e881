// ScanInputs: one scan's inputs read once; the stages share them and pass over the stack few times.
#include "orderband/scan_inputs.hpp"

#include <gtest/gtest.h>

#include <atomic>
#include <filesystem>
#include <fstream>

#include "orderband/error.hpp"
#include "orderband/map_scan.hpp"
#include "orderband/orient.hpp"
#include "orderband/pattern_sample.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "test_support.hpp"

using namespace orderband;

namespace {

/// A pattern source that counts the patterns read through it.
class CountingSource final : public PatternSource {
 public:
  explicit CountingSource(std::shared_ptr<PatternSource> inner) : inner_(std::move(inner)) {
    count_ = inner_->count();
    width_ = inner_->width();
    height_ = inner_->height();
  }
  std::string describe() const override { return inner_->describe(); }
  void read(size_t first, size_t n, float* out) override {
    patterns_read += n;
    inner_->read(first, n, out);
  }
  std::atomic<size_t> patterns_read{0};

 private:
  std::shared_ptr<PatternSource> inner_;
};

std::string small_scan(const std::string& stem) { return test::write_small_scan(test::make_temp_dir(stem), 16, 5); }

}  // namespace

/// One map of the small scan through a counting source: the results and the patterns read.
struct CountedMap {
  MapResults results;
  size_t patterns_read = 0;
};
CountedMap counted_map(const ScanConfig& config, const MapOptions& options) {
  ScanInputs inputs = read_scan_inputs(config);
  auto counting = std::make_shared<CountingSource>(inputs.patterns);
  inputs.patterns = counting;
  CountedMap out{map_scan(inputs, options), 0};
  out.patterns_read = counting->patterns_read;
  return out;
}

TEST(ScanInputs, MapReadsTheStackTwicePlusSamplesOfBoundedSize) {
  ScanConfig config = read_scan_config(small_scan("inputs"));
  const size_t n = config.grid.count();
  // Samples larger than the scan: every pattern is read by each of the five steps (the scan mean,
  // the orientation rows, the grains' mean patterns, the fraction rows, the mean spheres' points),
  // plus single points re-read by the orientation checks.
  MapOptions options;
  const CountedMap full = counted_map(config, options);
  ASSERT_GT(full.results.fraction.measured(), 0u);
  // Samples bounded as on a large scan: the scan mean from 32 points, each grain's mean pattern
  // from 16, each mean sphere from 16. Only the orientation rows and the fraction rows read every
  // pattern.
  config.preprocess.scan_mean_points = 32;
  options.fraction.grain_pattern_points = 16;
  options.mean_sphere_points = 16;
  const CountedMap sampled = counted_map(config, options);
  options.mean_spheres = false;
  const CountedMap no_spheres = counted_map(config, options);
  const int grains = sampled.results.orientations.grains.count();
  size_t orientation_reads = 0;
  {
    ScanInputs inputs = read_scan_inputs(config);
    auto counting = std::make_shared<CountingSource>(inputs.patterns);
    inputs.patterns = counting;
    orient_scan(inputs, options.orient);
    orientation_reads = counting->patterns_read;
  }
  ASSERT_GT(grains, 0);
  const size_t sphere_reads = sampled.patterns_read - no_spheres.patterns_read;
  EXPECT_LE(sphere_reads, 2u * 16u);
  EXPECT_GT(sphere_reads, 0u);
  // The orientation stage: the scan mean's 32, every pattern once, 8 points per grain for the
  // pseudo-symmetry check and single points re-read by the neighbour checks (under a tenth here).
  const size_t g = static_cast<size_t>(grains);
  EXPECT_GE(orientation_reads, n + 32);
  EXPECT_LE(orientation_reads, n + 32 + 8 * g + n / 10);
  // The map: the orientation stage, the raw sample `check` shows, every pattern once more for the
  // fraction rows, 16 per grain for the mean patterns, the spheres' points.
  const size_t bound = orientation_reads + kPatternSamplePoints + n + 16 * g + sphere_reads;
  EXPECT_LE(sampled.patterns_read, bound)
      << static_cast<double>(sampled.patterns_read) / n << " passes, " << grains << " grains, " << sphere_reads
      << " sphere reads, " << orientation_reads << " orientation reads";
  EXPECT_GE(sampled.patterns_read, bound - 16 * g);
  EXPECT_GE(sampled.patterns_read, 2 * n);
  EXPECT_GT(full.patterns_read, 4 * n) << static_cast<double>(full.patterns_read) / n << " passes";
  // The samples are means of a sample: the fractions move by far less than the per-point noise.
  EXPECT_NEAR(sampled.results.ordered_area_fraction(), full.results.ordered_area_fraction(), 0.01);
}

TEST(ScanInputs, HashChangesWithEveryInputFileAndNotWithoutOne) {
  const std::string path = small_scan("inputs-hash");
  const ScanConfig config = read_scan_config(path);
  const std::string h0 = scan_input_hash(config);
  EXPECT_EQ(h0.size(), 16u);
  EXPECT_EQ(scan_input_hash(read_scan_config(path)), h0);
  // One byte of the pattern stack changed: another hash.
  {
    std::fstream f(config.patterns.path, std::ios::in | std::ios::out | std::ios::binary);
    f.seekp(1000);
    f.put('\x7f');
  }
  const std::string h1 = scan_input_hash(config);
  EXPECT_NE(h1, h0);
  // A pattern mask named by the description enters the hash.
  ScanConfig masked = config;
  masked.preprocess.mask = MaskKind::file;
  masked.preprocess.mask_file = test::crystal_data("ni-fcc.cif");  // any file: only its bytes count here
  EXPECT_NE(scan_input_hash(masked), h1);
  // A pair given by CIF files: an edited CIF gives another hash (it reused stale rows before).
  ScanConfig own_pair = config;
  own_pair.phases.pair_name.clear();
  own_pair.phases.ordered_cif = config.folder + "/ordered.cif";
  own_pair.phases.disordered_cif = config.folder + "/disordered.cif";
  std::filesystem::copy_file(test::crystal_data("ni3al-gamma-prime.cif"), own_pair.phases.ordered_cif);
  std::filesystem::copy_file(test::crystal_data("ni-gamma.cif"), own_pair.phases.disordered_cif);
  const std::string h2 = scan_input_hash(own_pair);
  EXPECT_NE(h2, h1);
  std::ofstream(own_pair.phases.disordered_cif, std::ios::app) << "# edited\n";
  EXPECT_NE(scan_input_hash(own_pair), h2);
}

TEST(ScanInputs, AMissingFileIsOneClearError) {
  ScanConfig config = read_scan_config(small_scan("inputs-missing"));
  config.orientations.source = OrientationSourceKind::file;
  config.orientations.file = config.folder + "/absent.csv";
  try {
    read_scan_inputs(config);
    FAIL() << "no error";
  } catch (const Error& e) {
    EXPECT_NE(std::string(e.what()).find("absent.csv"), std::string::npos) << e.what();
  }
}

TEST(PreprocessedPoints, GiveThePatternsTheRowsGive) {
  ScanConfig config = read_scan_config(small_scan("inputs-points"));
  const std::vector<size_t> points{0, 17, 18, 100, 255};  // corners, an edge, the interior
  for (double sigma : {0.0, 0.8}) {
    config.preprocess.neighbour_sigma_steps = sigma;
    const ScanInputs inputs = read_scan_inputs(config);
    const Preprocessor& pre = inputs.preprocessor();
    const size_t px = inputs.patterns->pixels();
    PreprocessedPoints reader(*inputs.patterns, config.grid, pre);
    std::vector<float> sampled, row;
    std::vector<uint8_t> sampled_ok, row_ok;
    reader.load(points, sampled, sampled_ok);
    PreprocessedRows rows(*inputs.patterns, config.grid, pre);
    for (int r = 0; rows.next(row, row_ok); ++r)
      for (size_t i = 0; i < points.size(); ++i) {
        if (config.grid.point(points[i]).row != r) continue;
        const int c = config.grid.point(points[i]).col;
        ASSERT_EQ(sampled_ok[i], row_ok[c]);
        double worst = 0;
        for (size_t q = 0; q < px; ++q)
          worst = std::max(worst, std::abs(double(sampled[i * px + q]) - row[static_cast<size_t>(c) * px + q]));
        EXPECT_LT(worst, 1e-5) << "point " << points[i] << ", sigma " << sigma;
      }
  }
}

TEST(PreprocessedPoints, SpreadSampleTakesEvenlySpacedMembers) {
  std::vector<size_t> all(10);
  for (size_t i = 0; i < all.size(); ++i) all[i] = 100 + 3 * i;
  EXPECT_EQ(spread_sample(all, 0), all);
  EXPECT_EQ(spread_sample(all, 20), all);
  // (i + ½)·10/4 = 1.25, 3.75, 6.25, 8.75 → members 1, 3, 6, 8.
  EXPECT_EQ(spread_sample(all, 4), (std::vector<size_t>{103, 109, 118, 124}));
}
