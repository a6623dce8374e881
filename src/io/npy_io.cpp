// .npy reading and writing.
#include "orderband/npy_io.hpp"

#include <cstring>
#include <filesystem>
#include <fstream>
#include <regex>

#include "orderband/atomic_file.hpp"
#include "orderband/error.hpp"
#include "orderband/input_file.hpp"

namespace orderband {
namespace {

void write_npy(const std::string& path, const char* descr, int rows, int cols, const void* data, size_t bytes) {
  std::string header = std::string("{'descr': '") + descr + "', 'fortran_order': False, 'shape': (" +
                       std::to_string(rows) + ", " + std::to_string(cols) + "), }";
  const size_t total = 10 + header.size() + 1;
  header.append((64 - total % 64) % 64, ' ');
  header += '\n';
  write_atomically(path, [&](const std::string& temp) {
    std::ofstream out(temp, std::ios::binary);
    if (!out) fail("cannot create '", temp, "'");
    const unsigned char magic[8] = {0x93, 'N', 'U', 'M', 'P', 'Y', 1, 0};
    out.write(reinterpret_cast<const char*>(magic), 8);
    const uint16_t len = static_cast<uint16_t>(header.size());
    out.write(reinterpret_cast<const char*>(&len), 2);
    out << header;
    out.write(static_cast<const char*>(data), static_cast<std::streamsize>(bytes));
    finish_writing(out, path);
  });
}

}  // namespace

void write_npy_float32(const std::string& path, int rows, int cols, const std::vector<float>& v) {
  if (v.size() != static_cast<size_t>(rows) * cols)
    fail("npy: ", v.size(), " values for a ", rows, " x ", cols, " map");
  write_npy(path, "<f4", rows, cols, v.data(), v.size() * 4);
}

void write_npy_int32(const std::string& path, int rows, int cols, const std::vector<int32_t>& v) {
  if (v.size() != static_cast<size_t>(rows) * cols)
    fail("npy: ", v.size(), " values for a ", rows, " x ", cols, " map");
  write_npy(path, "<i4", rows, cols, v.data(), v.size() * 4);
}

namespace {

constexpr uint32_t kMaxNpyHeaderBytes = 1u << 20;  // numpy writes tens of bytes; a megabyte is damage

/// The dimensions of a shape tuple such as "40, 40" (or "40," or ""), each with at most 12 digits.
std::vector<size_t> npy_dimensions(const std::string& dims, const std::string& path) {
  std::vector<size_t> shape;
  static const std::regex number("[0-9]+");
  for (std::sregex_iterator it(dims.begin(), dims.end(), number), end; it != end; ++it) {
    if (it->str().size() > 12) fail("'", path, "': .npy dimension ", it->str().substr(0, 16), "... is too large");
    shape.push_back(std::stoul(it->str()));
  }
  return shape;
}

}  // namespace

NpyArray read_npy(const std::string& path) {
  require_regular_file(path, ".npy file");
  std::ifstream in(path, std::ios::binary);
  if (!in) fail("cannot read '", path, "'");
  std::error_code ec;
  const uintmax_t file_bytes = std::filesystem::file_size(path, ec);
  if (ec) fail("cannot read '", path, "' (not a regular file)");
  unsigned char magic[8];
  in.read(reinterpret_cast<char*>(magic), 8);
  if (!in || std::memcmp(magic, "\x93NUMPY", 6) != 0) fail("'", path, "' is not a .npy file");
  if (magic[6] < 1 || magic[6] > 3) fail("'", path, "': .npy format version ", int(magic[6]), " is not 1, 2 or 3");
  uint32_t len = 0;
  if (magic[6] == 1) {
    uint16_t l16 = 0;
    in.read(reinterpret_cast<char*>(&l16), 2);
    len = l16;
  } else {
    in.read(reinterpret_cast<char*>(&len), 4);
  }
  if (!in || len > kMaxNpyHeaderBytes) fail("'", path, "': unreadable .npy header");
  std::string header(len, ' ');
  in.read(header.data(), len);
  if (!in) fail("'", path, "' is shorter than its header says");
  std::smatch m;
  if (!std::regex_search(header, m, std::regex("'descr': *'([<|][a-z][0-9])'")))
    fail("'", path, "': unreadable .npy header");
  const std::string descr = m[1];
  const size_t item = descr == "<f4" || descr == "<i4" ? 4 : descr == "<f8" ? 8 : 0;
  if (item == 0) fail("'", path, "': unsupported dtype ", descr, " (use float32, float64 or int32)");
  if (header.find("'fortran_order': True") != std::string::npos) fail("'", path, "': Fortran order is not supported");
  if (!std::regex_search(header, m, std::regex("'shape': *\\(([0-9, ]*)\\)"))) fail("'", path, "': no shape");
  NpyArray a;
  a.shape = npy_dimensions(m[1], path);
  // The data must fill the rest of the file exactly (checked before anything is allocated).
  const uintmax_t data_bytes = file_bytes - static_cast<uintmax_t>(in.tellg());
  uintmax_t count = 1;
  for (size_t d : a.shape) {
    if (d != 0 && count > data_bytes / item / d + 1)
      fail("'", path, "': its shape needs more data than the file holds");
    count *= d;
  }
  if (count * item != data_bytes)
    fail("'", path, "': its shape needs ", count * item, " bytes of data, the file holds ", data_bytes);
  a.values.resize(count);
  if (descr == "<f4") {
    in.read(reinterpret_cast<char*>(a.values.data()), static_cast<std::streamsize>(count * 4));
  } else if (descr == "<f8") {
    std::vector<double> d(count);
    in.read(reinterpret_cast<char*>(d.data()), static_cast<std::streamsize>(count * 8));
    for (size_t k = 0; k < count; ++k) a.values[k] = static_cast<float>(d[k]);
  } else {
    std::vector<int32_t> d(count);
    in.read(reinterpret_cast<char*>(d.data()), static_cast<std::streamsize>(count * 4));
    for (size_t k = 0; k < count; ++k) a.values[k] = static_cast<float>(d[k]);
  }
  if (!in) fail("'", path, "' is shorter than its header says");
  return a;
}

}  // namespace orderband
