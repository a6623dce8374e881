// Hashes of input files and texts (provenance and resume keys).
#include "orderband/input_hash.hpp"

#include <algorithm>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <vector>

#include "orderband/error.hpp"
#include "orderband/input_file.hpp"

namespace fs = std::filesystem;

namespace orderband {

namespace {
constexpr uint64_t kFnvOffset = 1469598103934665603ull, kFnvPrime = 1099511628211ull;
std::string hex(uint64_t h) {
  char buf[17];
  std::snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(h));
  return buf;
}
}  // namespace

std::string file_hash_fnv1a64(const std::string& path) {
  require_regular_file(path, "input file");
  std::ifstream in(path, std::ios::binary);
  if (!in) fail("cannot read '", path, "' to hash it");
  uint64_t h = kFnvOffset;
  std::vector<char> buf(1 << 20);
  while (in) {
    in.read(buf.data(), static_cast<std::streamsize>(buf.size()));
    for (std::streamsize k = 0; k < in.gcount(); ++k) h = (h ^ static_cast<uint8_t>(buf[k])) * kFnvPrime;
  }
  return hex(h);
}

std::string folder_hash_fnv1a64(const std::string& folder) {
  std::vector<fs::path> files;
  std::error_code ec;
  for (const auto& e : fs::directory_iterator(folder, ec))
    if (e.is_regular_file()) files.push_back(e.path());
  if (ec) fail("cannot list '", folder, "' to hash it: ", ec.message());
  std::sort(files.begin(), files.end());
  std::string names_and_hashes;
  for (const fs::path& f : files)
    names_and_hashes += f.filename().string() + '\0' + file_hash_fnv1a64(f.string()) + '\n';
  return text_hash_fnv1a64(names_and_hashes);
}

std::string text_hash_fnv1a64(const std::string& text) {
  uint64_t h = kFnvOffset;
  for (char c : text) h = (h ^ static_cast<uint8_t>(c)) * kFnvPrime;
  return hex(h);
}

}  // namespace orderband
