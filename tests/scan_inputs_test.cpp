// ScanInputs: one scan's inputs read once; the stages share them and pass over the stack few times.
#include "orderband/scan_inputs.hpp"

#include <gtest/gtest.h>

#include <atomic>
#include <filesystem>
#include <fstream>

#include "orderband/error.hpp"
#include "orderband/map_scan.hpp"
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

TEST(ScanInputs, MapSharesOnePreprocessorAndPassesOverTheStackFiveTimes) {
  const ScanConfig config = read_scan_config(small_scan("inputs"));
  ScanInputs inputs = read_scan_inputs(config);
  auto counting = std::make_shared<CountingSource>(inputs.patterns);
  inputs.patterns = counting;
  MapOptions options;
  const MapResults r = map_scan(inputs, options);
  ASSERT_GT(r.fraction.measured(), 0u);
  const double passes = static_cast<double>(counting->patterns_read) / config.grid.count();
  // One scan-mean pass (shared by every stage: it was one per stage, three in all, seven passes
  // before ScanInputs), the orientation rows, the grain mean patterns of the fraction stage, the
  // fraction rows and the mean spheres; plus single points re-read by the orientation checks.
  // The aim is two passes (preprocess each pattern once and feed every stage from it).
  EXPECT_LE(passes, 5.5) << passes;
  EXPECT_GE(passes, 5.0) << passes;
  // Without the mean spheres one pass fewer.
  ScanInputs again = read_scan_inputs(config);
  auto counting2 = std::make_shared<CountingSource>(again.patterns);
  again.patterns = counting2;
  options.mean_spheres = false;
  map_scan(again, options);
  EXPECT_NEAR(static_cast<double>(counting2->patterns_read) / config.grid.count(), passes - 1, 1e-9);
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
