// Pattern files: raw stacks, HDF5 datasets and image folders, read in chunks.
#include "orderband/pattern_files.hpp"

#include <fcntl.h>
#include <hdf5.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <bit>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <regex>

#include "orderband/error.hpp"
#include "orderband/image_io.hpp"
#include "orderband/input_file.hpp"

namespace fs = std::filesystem;

namespace orderband {

static_assert(std::endian::native == std::endian::little, "raw pattern reading assumes a little-endian host");

namespace {

size_t sample_bytes(SampleType t) { return t == SampleType::uint8 ? 1 : t == SampleType::uint16 ? 2 : 4; }

class RawSource final : public PatternSource {
 public:
  RawSource(const PatternSourceSpec& spec, const ScanGrid& grid) : spec_(spec), grid_(grid) {
    if (spec.width_px <= 0 || spec.height_px <= 0)
      fail(spec.path, ": a raw stack needs width_px and height_px (the stored pattern size)");
    width_ = spec.width_px;
    height_ = spec.height_px;
    count_ = grid.count();
    require_regular_file(spec.path, "pattern file");
    fd_ = ::open(spec.path.c_str(), O_RDONLY);
    if (fd_ < 0) fail("cannot open pattern file '", spec.path, "': ", std::strerror(errno));
    struct stat st {};
    ::fstat(fd_, &st);
    size_ = static_cast<size_t>(st.st_size);
    const size_t needed = spec.header_bytes + count_ * pixels() * sample_bytes(spec.sample_type);
    if (size_ != needed + spec.trailer_bytes) {
      // Exactly: a longer file is as wrong as a shorter one (a wrong width, fewer rows than the
      // file holds or an undeclared header all leave bytes over and shift every pattern).
      ::close(fd_);
      fail(spec.path, " is ", size_, " bytes, ", size_ < needed + spec.trailer_bytes ? "shorter" : "longer",
           " than header ", spec.header_bytes, " + ", grid.rows, " rows x ", grid.cols, " cols x ", height_, " x ",
           width_, " px x ", sample_bytes(spec.sample_type), " bytes = ", needed, " bytes",
           spec.trailer_bytes ? " + trailer " + std::to_string(spec.trailer_bytes) : std::string(),
           "; check the grid size, pattern size, sample type and header (a stack with bytes after its patterns "
           "declares them as trailer_bytes)");
    }
  }
  ~RawSource() override { ::close(fd_); }
  std::string describe() const override {
    return std::string("raw ") + sample_type_name(spec_.sample_type) + " stack " + spec_.path;
  }
  /// Read with pread (safe from several threads): only the chunk asked for is held, and the file's
  /// pages stay in the system's cache, not in this process's resident set (a memory map would
  /// also map the neighbouring pages the kernel faults in around each read).
  void read(size_t first, size_t n, float* out) override {
    if (first + n > count_) fail(spec_.path, ": read past the last pattern");
    const size_t bytes = sample_bytes(spec_.sample_type);
    const size_t m = n * pixels();
    if (spec_.sample_type == SampleType::float32) {
      read_bytes(first, m * 4, reinterpret_cast<uint8_t*>(out));
      mark_non_finite(out, n, first, grid_);
      return;
    }
    std::vector<uint8_t> raw(m * bytes);
    read_bytes(first, raw.size(), raw.data());
    if (spec_.sample_type == SampleType::uint8)
      for (size_t k = 0; k < m; ++k) out[k] = raw[k];
    else
      for (size_t k = 0; k < m; ++k) {
        uint16_t v;
        std::memcpy(&v, raw.data() + 2 * k, 2);
        out[k] = v;
      }
  }

 private:
  /// `length` bytes of the patterns from pattern `first` on.
  void read_bytes(size_t first, size_t length, uint8_t* out) const {
    off_t offset = static_cast<off_t>(spec_.header_bytes + first * pixels() * sample_bytes(spec_.sample_type));
    while (length > 0) {
      const ssize_t got = ::pread(fd_, out, length, offset);
      if (got < 0 && errno == EINTR) continue;
      if (got <= 0)
        fail("cannot read '", spec_.path, "' at byte ", offset, ": ", got < 0 ? std::strerror(errno) : "end of file");
      out += got, offset += got, length -= static_cast<size_t>(got);
    }
  }

  PatternSourceSpec spec_;
  ScanGrid grid_;
  int fd_ = -1;
  size_t size_ = 0;
};

class Hdf5Source final : public PatternSource {
 public:
  Hdf5Source(const PatternSourceSpec& spec, const ScanGrid& grid) : spec_(spec), grid_(grid) {
    H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
    require_regular_file(spec.path, "HDF5 pattern file");
    file_ = H5Fopen(spec.path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT);
    if (file_ < 0) fail("'", spec.path, "' is not a readable HDF5 file");
    if (spec.dataset.empty()) fail(spec.path, ": name the pattern dataset (key 'dataset', e.g. \"/scan/patterns\")");
    if (H5Lexists(file_, spec.dataset.c_str(), H5P_DEFAULT) <= 0) {
      H5Fclose(file_);
      fail(spec.path, ": no dataset '", spec.dataset, "'; check the dataset path");
    }
    dset_ = H5Dopen2(file_, spec.dataset.c_str(), H5P_DEFAULT);
    if (dset_ < 0) {
      H5Fclose(file_);
      fail(spec.path, ": '", spec.dataset, "' is not a dataset");
    }
    space_ = H5Dget_space(dset_);
    rank_ = H5Sget_simple_extent_ndims(space_);
    hsize_t dims[4] = {0, 0, 0, 0};
    if (rank_ == 3 || rank_ == 4) H5Sget_simple_extent_dims(space_, dims, nullptr);
    auto close_all = [&] {
      H5Sclose(space_);
      H5Dclose(dset_);
      H5Fclose(file_);
    };
    if (rank_ != 3 && rank_ != 4) {
      close_all();
      fail(spec.path, ": dataset '", spec.dataset, "' has rank ", rank_,
           "; patterns must be shaped [points, h, w] or [rows, cols, h, w]");
    }
    const size_t points = rank_ == 3 ? dims[0] : dims[0] * dims[1];
    height_ = static_cast<int>(dims[rank_ - 2]);
    width_ = static_cast<int>(dims[rank_ - 1]);
    if (rank_ == 4 && (dims[0] != static_cast<hsize_t>(grid.rows) || dims[1] != static_cast<hsize_t>(grid.cols))) {
      close_all();
      fail(spec.path, ": dataset '", spec.dataset, "' is ", dims[0], " x ", dims[1], " points but the scan grid is ",
           grid.rows, " x ", grid.cols);
    }
    if (points != grid.count()) {
      close_all();
      fail(spec.path, ": dataset '", spec.dataset, "' holds ", points, " patterns but the scan grid has ", grid.rows,
           " x ", grid.cols, " = ", grid.count());
    }
    count_ = points;
    const hid_t type = H5Dget_type(dset_);
    const H5T_class_t cls = H5Tget_class(type);
    H5Tclose(type);
    if (cls != H5T_INTEGER && cls != H5T_FLOAT) {
      close_all();
      fail(spec.path, ": dataset '", spec.dataset, "' is not numeric");
    }
    is_float_ = cls == H5T_FLOAT;
  }
  ~Hdf5Source() override {
    H5Sclose(space_);
    H5Dclose(dset_);
    H5Fclose(file_);
  }
  std::string describe() const override { return "HDF5 dataset " + spec_.dataset + " in " + spec_.path; }
  void read(size_t first, size_t n, float* out) override {
    if (first + n > count_) fail(spec_.path, ": read past the last pattern");
    // Points are row-major over the grid, so a chunk of a rank-4 dataset is read row by row.
    size_t done = 0;
    while (done < n) {
      const size_t p = first + done;
      hsize_t start[4] = {0, 0, 0, 0}, cnt[4] = {0, 0, 0, 0};
      size_t take;
      if (rank_ == 3) {
        take = n - done;
        start[0] = p;
        cnt[0] = take;
        cnt[1] = height_;
        cnt[2] = width_;
      } else {
        const size_t row = p / grid_.cols, col = p % grid_.cols;
        take = std::min(n - done, static_cast<size_t>(grid_.cols) - col);
        start[0] = row;
        start[1] = col;
        cnt[0] = 1;
        cnt[1] = take;
        cnt[2] = height_;
        cnt[3] = width_;
      }
      H5Sselect_hyperslab(space_, H5S_SELECT_SET, start, nullptr, cnt, nullptr);
      const hsize_t mem_dims[1] = {take * pixels()};
      const hid_t mem = H5Screate_simple(1, mem_dims, nullptr);
      const herr_t status = H5Dread(dset_, H5T_NATIVE_FLOAT, mem, space_, H5P_DEFAULT, out + done * pixels());
      H5Sclose(mem);
      if (status < 0) fail(spec_.path, ": cannot read patterns ", p, "..", p + take - 1, " of '", spec_.dataset, "'");
      done += take;
    }
    if (is_float_) mark_non_finite(out, n, first, grid_);
  }

 private:
  PatternSourceSpec spec_;
  ScanGrid grid_;
  hid_t file_ = -1, dset_ = -1, space_ = -1;
  int rank_ = 0;
  bool is_float_ = false;
};

class ImageFolderSource final : public PatternSource {
 public:
  ImageFolderSource(const PatternSourceSpec& spec, const ScanGrid& grid) : spec_(spec), grid_(grid) {
    if (!fs::is_directory(spec.path)) fail("pattern image folder '", spec.path, "' does not exist");
    if (spec.name_pattern.empty())
      fail("name the pattern images with 'name_pattern', e.g. \"p_{row:03}_{col:03}.png\" or \"{index:05}.tif\"");
    // Without {index}, or {row} and {col}, every point would read the same image.
    const bool by_index = spec.name_pattern.find("{index") != std::string::npos;
    const bool by_row_col =
        spec.name_pattern.find("{row") != std::string::npos && spec.name_pattern.find("{col") != std::string::npos;
    if (!by_index && !by_row_col)
      fail("name_pattern \"", spec.name_pattern.substr(0, 80),
           "\" names one file for every point: it needs {index}, or {row} and {col}");
    count_ = grid.count();
    const GrayImage first = read_gray_image(file_of(0));
    width_ = first.width;
    height_ = first.height;
    if ((spec.width_px && spec.width_px != width_) || (spec.height_px && spec.height_px != height_))
      fail(file_of(0), " is ", width_, " x ", height_, " px, but the scan description says ", spec.width_px, " x ",
           spec.height_px);
  }
  std::string describe() const override { return "image folder " + spec_.path + " (" + spec_.name_pattern + ")"; }
  void read(size_t first, size_t n, float* out) override {
    for (size_t k = 0; k < n; ++k) {
      const std::string file = file_of(first + k);
      float* pattern = out + k * pixels();
      if (!fs::exists(file)) {
        mark_faulty(first + k, "image " + file + " is missing", pattern);
        continue;
      }
      GrayImage img;
      try {
        img = read_gray_image(file);
      } catch (const Error& e) {
        mark_faulty(first + k, e.what(), pattern);
        continue;
      }
      if (img.width != width_ || img.height != height_) {
        mark_faulty(first + k,
                    file + " is " + std::to_string(img.width) + " x " + std::to_string(img.height) +
                        " px; the first pattern is " + std::to_string(width_) + " x " + std::to_string(height_) + " px",
                    pattern);
        continue;
      }
      for (size_t q = 0; q < pixels(); ++q) pattern[q] = img.pixels[q];
    }
  }
  std::string file_of(size_t index) const {
    const GridPoint p = grid_.point(index);
    static const std::regex placeholder(R"(\{(index|row|col)(?::(0?)(\d+))?\})");
    std::string result;
    auto begin = spec_.name_pattern.cbegin();
    for (std::sregex_iterator it(spec_.name_pattern.begin(), spec_.name_pattern.end(), placeholder), end; it != end;
         ++it) {
      const std::smatch& m = *it;
      result.append(begin, m[0].first);
      const std::string key = m[1];
      const long value = key == "index" ? static_cast<long>(index) : key == "row" ? p.row : p.col;
      std::string digits = std::to_string(value);
      if (m[3].matched) {
        const size_t widthv = std::stoul(m[3]);
        if (digits.size() < widthv) digits.insert(0, widthv - digits.size(), m[2].length() ? '0' : ' ');
      }
      result += digits;
      begin = m[0].second;
    }
    result.append(begin, spec_.name_pattern.cend());
    return (fs::path(spec_.path) / result).string();
  }

 private:
  PatternSourceSpec spec_;
  ScanGrid grid_;
};

}  // namespace

std::unique_ptr<PatternSource> open_pattern_source(const PatternSourceSpec& spec, const ScanGrid& grid) {
  grid.validate();
  std::unique_ptr<PatternSource> src;
  switch (spec.format) {
    case PatternFormat::raw:
      src = std::make_unique<RawSource>(spec, grid);
      break;
    case PatternFormat::hdf5:
      src = std::make_unique<Hdf5Source>(spec, grid);
      break;
    case PatternFormat::images:
      src = std::make_unique<ImageFolderSource>(spec, grid);
      break;
  }
  if ((spec.width_px && spec.width_px != src->width()) || (spec.height_px && spec.height_px != src->height()))
    fail(src->describe(), ": patterns are ", src->width(), " x ", src->height(), " px, but the scan description says ",
         spec.width_px, " x ", spec.height_px);
  return src;
}

}  // namespace orderband
