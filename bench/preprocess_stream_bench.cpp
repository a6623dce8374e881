// Benchmark: stream-preprocess a large raw stack; report throughput and peak memory.
// usage: preprocess_stream_bench [SIZE_GB=2.0] [PATTERN_PX=120] [NEIGHBOUR_SIGMA=0]
// Target (issue Step 2): a 2 GB raw stack preprocessed with peak memory under 300 MB.
#include <sys/resource.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <vector>

#include "orderband/pattern_files.hpp"
#include "orderband/preprocess.hpp"

using namespace orderband;

int main(int argc, char** argv) {
  const double size_gb = argc > 1 ? std::atof(argv[1]) : 2.0;
  const int px = argc > 2 ? std::atoi(argv[2]) : 120;
  const double neighbour_sigma = argc > 3 ? std::atof(argv[3]) : 0.0;
  const size_t pattern_bytes = static_cast<size_t>(px) * px * 2;
  const int side = static_cast<int>(std::sqrt(size_gb * 1e9 / pattern_bytes));
  const ScanGrid grid{GridKind::square, side, side, 0.05};
  const std::string path = (std::filesystem::temp_directory_path() / "orderband-bench-stack.raw").string();
  {
    std::ofstream out(path, std::ios::binary);
    std::vector<uint16_t> pattern(static_cast<size_t>(px) * px);
    uint64_t state = 88172645463325252ull;
    for (size_t k = 0; k < grid.count(); ++k) {
      for (int i = 0; i < px; ++i)
        for (int j = 0; j < px; ++j) {
          state ^= state << 13, state ^= state >> 7, state ^= state << 17;
          const double smooth = 3000 + 1500 * std::cos(0.03 * (i - px / 2)) * std::cos(0.02 * (j - px / 3));
          pattern[static_cast<size_t>(i) * px + j] = static_cast<uint16_t>(smooth + (state % 200));
        }
      out.write(reinterpret_cast<const char*>(pattern.data()), pattern.size() * 2);
    }
  }
  std::printf("stack: %d x %d points, %d x %d px uint16, %.2f GB at %s\n", side, side, px, px,
              double(grid.count()) * pattern_bytes / 1e9, path.c_str());
  struct rusage before {};
  getrusage(RUSAGE_SELF, &before);

  PatternSourceSpec spec;
  spec.path = path;
  spec.width_px = spec.height_px = px;
  auto source = open_pattern_source(spec, grid);
  PreprocessSpec pre_spec;
  pre_spec.neighbour_sigma_steps = neighbour_sigma;
  const auto t0 = std::chrono::steady_clock::now();
  const Preprocessor pre = make_preprocessor(pre_spec, *source);  // includes the scan-mean pass
  const auto t1 = std::chrono::steady_clock::now();
  PreprocessedRows rows(*source, grid, pre);
  std::vector<float> patterns;
  std::vector<uint8_t> usable;
  size_t done = 0, good = 0;
  while (rows.next(patterns, usable)) {
    done += usable.size();
    for (uint8_t u : usable) good += u;
  }
  const auto t2 = std::chrono::steady_clock::now();
  struct rusage after {};
  getrusage(RUSAGE_SELF, &after);
  const double mean_s = std::chrono::duration<double>(t1 - t0).count();
  const double pre_s = std::chrono::duration<double>(t2 - t1).count();
  std::printf("scan-mean pass: %.1f s (%.0f patterns/s)\n", mean_s, done / mean_s);
  std::printf("preprocessing:  %.1f s (%.0f patterns/s), %zu usable of %zu\n", pre_s, done / pre_s, good, done);
  std::printf("peak resident memory: %.0f MB (target < 300 MB)\n", after.ru_maxrss / 1024.0);
  std::filesystem::remove(path);
  return after.ru_maxrss / 1024.0 < 300 ? 0 : 1;
}
