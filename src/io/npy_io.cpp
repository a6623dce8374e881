// .npy reading and writing.
#include "orderband/npy_io.hpp"

#include <cstring>
#include <fstream>
#include <regex>

#include "orderband/atomic_file.hpp"
#include "orderband/error.hpp"

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

NpyArray read_npy(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) fail("cannot read '", path, "'");
  char magic[8];
  in.read(magic, 8);
  if (!in || std::memcmp(magic + 1, "NUMPY", 5) != 0) fail("'", path, "' is not a .npy file");
  uint32_t len = 0;
  if (magic[6] == 1) {
    uint16_t l16;
    in.read(reinterpret_cast<char*>(&l16), 2);
    len = l16;
  } else {
    in.read(reinterpret_cast<char*>(&len), 4);
  }
  std::string header(len, ' ');
  in.read(header.data(), len);
  std::smatch m;
  if (!std::regex_search(header, m, std::regex("'descr': *'([<|][a-z][0-9])'")))
    fail("'", path, "': unreadable .npy header");
  const std::string descr = m[1];
  if (header.find("'fortran_order': True") != std::string::npos) fail("'", path, "': Fortran order is not supported");
  if (!std::regex_search(header, m, std::regex("'shape': *\\(([0-9, ]*)\\)"))) fail("'", path, "': no shape");
  NpyArray a;
  size_t count = 1;
  const std::string dims = m[1];
  static const std::regex number("[0-9]+");
  for (std::sregex_iterator it(dims.begin(), dims.end(), number), end; it != end; ++it) {
    a.shape.push_back(std::stoul(it->str()));
    count *= a.shape.back();
  }
  a.values.resize(count);
  if (descr == "<f4") {
    in.read(reinterpret_cast<char*>(a.values.data()), count * 4);
  } else if (descr == "<f8") {
    std::vector<double> d(count);
    in.read(reinterpret_cast<char*>(d.data()), count * 8);
    for (size_t k = 0; k < count; ++k) a.values[k] = static_cast<float>(d[k]);
  } else if (descr == "<i4") {
    std::vector<int32_t> d(count);
    in.read(reinterpret_cast<char*>(d.data()), count * 4);
    for (size_t k = 0; k < count; ++k) a.values[k] = static_cast<float>(d[k]);
  } else {
    fail("'", path, "': unsupported dtype ", descr, " (use float32, float64 or int32)");
  }
  if (!in) fail("'", path, "' is shorter than its header says");
  return a;
}

}  // namespace orderband
