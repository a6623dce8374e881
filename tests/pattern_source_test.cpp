// Pattern sources: raw, HDF5 (written by h5py), PNG and TIFF folders give identical patterns; bad input.
#include "orderband/pattern_source.hpp"
#include "orderband/pattern_files.hpp"

#include <gtest/gtest.h>

#include <cstring>
#include <filesystem>
#include <fstream>
#include <random>

#include "orderband/error.hpp"
#include "orderband/image_io.hpp"
#include "orderband/scan_config.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

constexpr int kRows = 5, kCols = 4, kH = 16, kW = 20;

struct Fixture {
  std::string dir;
  std::vector<uint16_t> data;  // rows·cols·h·w
  ScanGrid grid{GridKind::square, kRows, kCols, 0.1};
  Fixture() : dir(test::make_temp_dir("src")) {
    std::mt19937 rng(42);
    std::uniform_int_distribution<int> u(0, 65535);
    data.resize(static_cast<size_t>(kRows) * kCols * kH * kW);
    for (auto& v : data) v = static_cast<uint16_t>(u(rng));
  }
  ~Fixture() { std::filesystem::remove_all(dir); }
  std::string write_raw(size_t header, size_t drop_bytes = 0) const {
    const std::string path = dir + "/stack.raw";
    std::ofstream f(path, std::ios::binary);
    std::string head(header, 'h');
    f.write(head.data(), head.size());
    f.write(reinterpret_cast<const char*>(data.data()), data.size() * 2 - drop_bytes);
    return path;
  }
  std::vector<float> read_all(PatternSource& s, size_t chunk) const {
    std::vector<float> out(s.count() * s.pixels());
    for (size_t first = 0; first < s.count(); first += chunk)
      s.read(first, std::min(chunk, s.count() - first), out.data() + first * s.pixels());
    return out;
  }
  std::vector<float> expected() const { return std::vector<float>(data.begin(), data.end()); }
};

PatternSourceSpec raw_spec(const std::string& path, size_t header) {
  PatternSourceSpec s;
  s.format = PatternFormat::raw;
  s.path = path;
  s.sample_type = SampleType::uint16;
  s.header_bytes = header;
  s.width_px = kW;
  s.height_px = kH;
  return s;
}

std::string error_of(const PatternSourceSpec& spec, const ScanGrid& grid) {
  try {
    auto src = open_pattern_source(spec, grid);
    std::vector<float> buf(src->count() * src->pixels());
    src->read(0, src->count(), buf.data());
  } catch (const Error& e) {
    return e.what();
  }
  return "no error";
}

TEST(PatternSource, RawHdf5PngAndTiffGiveIdenticalPatterns) {
  Fixture fx;
  const auto raw = open_pattern_source(raw_spec(fx.write_raw(512), 512), fx.grid);
  EXPECT_EQ(fx.read_all(*raw, 3), fx.expected());

  for (int rank : {3, 4}) {
    const std::string h5 = fx.dir + "/p" + std::to_string(rank) + ".h5";
    const auto r = test::run_reference_script(
        "write_hdf5.py", fx.write_raw(0) + " " + h5 + " /scan/patterns " + "5 4 16 20 " + std::to_string(rank));
    ASSERT_EQ(r.exit_code, 0) << r.err;
    PatternSourceSpec s;
    s.format = PatternFormat::hdf5;
    s.path = h5;
    s.dataset = "/scan/patterns";
    const auto src = open_pattern_source(s, fx.grid);
    EXPECT_EQ(src->width(), kW);
    EXPECT_EQ(src->height(), kH);
    EXPECT_EQ(fx.read_all(*src, 3), fx.expected()) << "rank " << rank;  // chunks of 3 cross scan rows
  }

  for (const std::string ext : {"png", "tif"}) {
    const std::string folder = fx.dir + "/" + ext;
    std::filesystem::create_directory(folder);
    for (size_t k = 0; k < fx.grid.count(); ++k) {
      GrayImage img{kW, kH, 16,
                    std::vector<uint16_t>(fx.data.begin() + k * kW * kH, fx.data.begin() + (k + 1) * kW * kH)};
      const GridPoint p = fx.grid.point(k);
      char name[64];
      std::snprintf(name, sizeof name, "/p_%03d_%02d.%s", p.row, p.col, ext.c_str());
      if (ext == "png")
        write_png_gray(folder + name, img);
      else
        write_tiff_gray(folder + name, img);
    }
    PatternSourceSpec s;
    s.format = PatternFormat::images;
    s.path = folder;
    s.name_pattern = "p_{row:03}_{col:02}." + ext;
    const auto src = open_pattern_source(s, fx.grid);
    EXPECT_EQ(fx.read_all(*src, 7), fx.expected()) << ext;
  }
}

TEST(PatternSource, Float32RawStackAndNonFiniteValues) {
  Fixture fx;
  const std::string path = fx.dir + "/f.raw";
  std::vector<float> values(fx.data.begin(), fx.data.end());
  for (auto& v : values) v *= 0.25f;
  std::ofstream(path, std::ios::binary).write(reinterpret_cast<const char*>(values.data()), values.size() * 4);
  PatternSourceSpec s = raw_spec(path, 0);
  s.sample_type = SampleType::float32;
  auto src = open_pattern_source(s, fx.grid);
  EXPECT_EQ(fx.read_all(*src, 6), values);
  // NaN in one pattern, infinity in another: the scan goes on; those two patterns come back as NaN
  // throughout (unusable) and are recorded with their point; every other pattern is read as stored.
  const size_t bad_nan = 2 * kCols + 3, bad_inf = 4 * kCols + 0, pixels = static_cast<size_t>(kW) * kH;
  values[bad_nan * pixels + 17] = std::nanf("");
  values[bad_inf * pixels + 3] = INFINITY;
  std::ofstream(path, std::ios::binary).write(reinterpret_cast<const char*>(values.data()), values.size() * 4);
  auto faulty = open_pattern_source(s, fx.grid);
  const std::vector<float> read = fx.read_all(*faulty, 6);
  const auto faults = faulty->faults();
  ASSERT_EQ(faults.size(), 2u);
  EXPECT_NE(faults.at(bad_nan).find("row 2, col 3 has a NaN or infinite pixel (17)"), std::string::npos);
  EXPECT_NE(faults.at(bad_inf).find("row 4, col 0 has a NaN or infinite pixel (3)"), std::string::npos);
  for (size_t k = 0; k < fx.grid.count(); ++k)
    for (size_t q = 0; q < pixels; ++q) {
      const float v = read[k * pixels + q];
      if (k == bad_nan || k == bad_inf)
        ASSERT_TRUE(std::isnan(v)) << k;
      else
        ASSERT_EQ(v, values[k * pixels + q]) << k;
    }
}

TEST(PatternSource, AMissingOrCorruptImageIsAFaultOfItsPointOnly) {
  Fixture fx;
  const std::string folder = fx.dir + "/img";
  std::filesystem::create_directory(folder);
  const size_t pixels = static_cast<size_t>(kW) * kH;
  for (size_t k = 0; k < fx.grid.count(); ++k) {
    GrayImage img{kW, kH, 16, std::vector<uint16_t>(fx.data.begin() + k * pixels, fx.data.begin() + (k + 1) * pixels)};
    write_png_gray(folder + "/" + std::to_string(k) + ".png", img);
  }
  std::filesystem::remove(folder + "/19.png");                        // the last point's image: missing
  std::ofstream(folder + "/7.png", std::ios::binary) << "not a png";  // corrupt
  GrayImage small{kW / 2, kH, 16, std::vector<uint16_t>(pixels / 2, 100)};
  write_png_gray(folder + "/11.png", small);  // wrongly sized
  PatternSourceSpec s;
  s.format = PatternFormat::images;
  s.path = folder;
  s.name_pattern = "{index}.png";
  const auto src = open_pattern_source(s, fx.grid);
  const std::vector<float> read = fx.read_all(*src, 4);
  const auto faults = src->faults();
  ASSERT_EQ(faults.size(), 3u);
  EXPECT_NE(faults.at(19).find("is missing"), std::string::npos) << faults.at(19);
  EXPECT_NE(faults.at(7).find("7.png"), std::string::npos) << faults.at(7);
  EXPECT_NE(faults.at(11).find("is 10 x 16 px; the first pattern is 20 x 16 px"), std::string::npos) << faults.at(11);
  for (size_t k = 0; k < fx.grid.count(); ++k) {
    const bool bad = k == 19 || k == 7 || k == 11;
    EXPECT_EQ(std::isnan(read[k * pixels]), bad) << k;
    if (!bad) {
      EXPECT_EQ(read[k * pixels + 5], static_cast<float>(fx.data[k * pixels + 5])) << k;
    }
  }
}

TEST(PatternSource, ClearErrorsForBadInput) {
  Fixture fx;
  // A raw file one pattern short.
  const std::string short_raw = fx.write_raw(0, kW * kH * 2);
  const std::string e1 = error_of(raw_spec(short_raw, 0), fx.grid);
  EXPECT_NE(e1.find("shorter than header 0 + 5 rows x 4 cols x 16 x 20 px x 2 bytes = 12800 bytes"), std::string::npos)
      << e1;
  EXPECT_NE(e1.find(short_raw), std::string::npos);
  EXPECT_THROW(parse_sample_type("int12"), Error);
  EXPECT_NE(error_of(raw_spec(fx.dir + "/none.raw", 0), fx.grid).find("cannot read pattern file"), std::string::npos);

  const std::string h5 = fx.dir + "/bad.h5";
  ASSERT_EQ(test::run_reference_script("write_hdf5.py", fx.write_raw(0) + " " + h5 + " /flat 5 4 16 20 2").exit_code,
            0);
  PatternSourceSpec s;
  s.format = PatternFormat::hdf5;
  s.path = h5;
  s.dataset = "/flat";
  EXPECT_NE(error_of(s, fx.grid).find("has rank 2; patterns must be shaped [points, h, w] or [rows, cols, h, w]"),
            std::string::npos);
  s.dataset = "/missing";
  EXPECT_NE(error_of(s, fx.grid).find("no dataset '/missing'"), std::string::npos);
  // A grid that does not match the dataset.
  ScanGrid wrong = fx.grid;
  wrong.rows = 6;
  s.dataset = "/flat";
  ASSERT_EQ(test::run_reference_script("write_hdf5.py", fx.write_raw(0) + " " + h5 + " /p 5 4 16 20 3").exit_code, 0);
  s.dataset = "/p";
  EXPECT_NE(error_of(s, wrong).find("holds 20 patterns but the scan grid has 6 x 4 = 24"), std::string::npos);

  PatternSourceSpec img;
  img.format = PatternFormat::images;
  img.path = fx.dir + "/nofolder";
  img.name_pattern = "{index}.png";
  EXPECT_NE(error_of(img, fx.grid).find("does not exist"), std::string::npos);
}

TEST(PatternSource, HexagonalGridNeighboursByHand) {
  // Odd rows sit half a step to the right: (2, 2) touches (1, 1), (1, 2), (3, 1), (3, 2);
  // (1, 2) touches (0, 2), (0, 3), (2, 2), (2, 3).
  const ScanGrid g{GridKind::hexagonal, 5, 5, 1.0};
  auto has = [](const std::vector<GridPoint>& v, GridPoint p) { return std::find(v.begin(), v.end(), p) != v.end(); };
  const auto a = g.neighbours({2, 2});
  EXPECT_EQ(a.size(), 6u);
  for (GridPoint p : {GridPoint{2, 1}, {2, 3}, {1, 1}, {1, 2}, {3, 1}, {3, 2}}) EXPECT_TRUE(has(a, p));
  const auto b = g.neighbours({1, 2});
  for (GridPoint p : {GridPoint{1, 1}, {1, 3}, {0, 2}, {0, 3}, {2, 2}, {2, 3}}) EXPECT_TRUE(has(b, p));
  // Every neighbour is exactly one step away.
  for (GridPoint p : a) EXPECT_NEAR((g.position_um(p) - g.position_um({2, 2})).norm(), 1.0, 1e-12);
  for (GridPoint p : b) EXPECT_NEAR((g.position_um(p) - g.position_um({1, 2})).norm(), 1.0, 1e-12);
  EXPECT_NEAR(g.field_height_um(), 5 * std::sqrt(3.0) / 2, 1e-12);
}

TEST(PatternSource, BeamReachOnTheGrid) {
  // A reach of one step each way is the neighbourhood (8 on a square grid, 6 on a hexagonal one);
  // a footprint 2.9 times longer along the tilt (σ 10 nm × 2.9, 25 nm steps: 2 σ = 2.3 rows) reaches
  // 3 rows and 1 column: a 7 × 3 window less the point itself, cut at the field's edge.
  const ScanGrid square{GridKind::square, 10, 8, 0.025};
  const ScanGrid hex{GridKind::hexagonal, 10, 8, 0.025};
  EXPECT_EQ(square.within_reach({4, 4}, 1, 1), square.neighbours({4, 4}, 8));
  EXPECT_EQ(hex.within_reach({4, 4}, 1, 1), hex.neighbours({4, 4}));
  EXPECT_EQ(square.within_reach({4, 4}, 3, 1).size(), 20u);
  EXPECT_EQ(square.within_reach({0, 0}, 3, 1).size(), 7u);  // rows 0–3, columns 0–1, less (0, 0)
  ScanConfig config;
  config.grid = square;
  config.beam.sigma_nm = 10;
  config.beam.elongation = 2.9;
  const GridReach reach = beam_reach(config);
  EXPECT_EQ(reach.rows, 3);
  EXPECT_EQ(reach.cols, 1);
  config.beam.elongation.reset();
  config.geometry.sample_tilt_deg = 0;  // a flat sample: 2 σ = 20 nm, under one step
  EXPECT_EQ(beam_reach(config).rows, 1);
}

}  // namespace
}  // namespace orderband

namespace orderband {

TEST(PatternSourceExact, ARawFileLongerThanTheGridNeedsIsAnErrorUnlessATrailerIsDeclared) {
  // A wrong width_px, fewer rows than the file holds or an undeclared 256-byte header all left
  // bytes over and were read without a word.
  const std::string dir = test::make_temp_dir("exact");
  ScanGrid grid;
  grid.rows = 2, grid.cols = 3, grid.step_um = 0.1;
  PatternSourceSpec spec;
  spec.format = PatternFormat::raw, spec.sample_type = SampleType::uint8, spec.width_px = 4, spec.height_px = 5;
  spec.path = dir + "/p.raw";
  const size_t data = 6 * 4 * 5;
  std::ofstream(spec.path, std::ios::binary) << std::string(data + 256, '\x07');
  try {
    open_pattern_source(spec, grid);
    ADD_FAILURE() << "a longer file was accepted";
  } catch (const Error& e) {
    EXPECT_NE(std::string(e.what()).find("is 376 bytes, longer than header 0 + 2 rows x 3 cols"), std::string::npos)
        << e.what();
  }
  spec.trailer_bytes = 256;
  EXPECT_NO_THROW(open_pattern_source(spec, grid));
  spec.trailer_bytes = 0, spec.header_bytes = 256;
  EXPECT_NO_THROW(open_pattern_source(spec, grid));
  spec.header_bytes = 300;
  EXPECT_THROW(open_pattern_source(spec, grid), Error);  // shorter
  std::filesystem::remove_all(dir);
}

TEST(PatternSourceExact, AnImageNamePatternWithoutAPlaceholderIsAnError) {
  const std::string dir = test::make_temp_dir("names");
  ScanGrid grid;
  grid.rows = 2, grid.cols = 2, grid.step_um = 0.1;
  PatternSourceSpec spec;
  spec.format = PatternFormat::images, spec.path = dir, spec.name_pattern = "pattern.png";
  try {
    open_pattern_source(spec, grid);
    ADD_FAILURE() << "one image for every point was accepted";
  } catch (const Error& e) {
    EXPECT_NE(std::string(e.what()).find("needs {index}, or {row} and {col}"), std::string::npos) << e.what();
  }
  std::filesystem::remove_all(dir);
}

}  // namespace orderband
