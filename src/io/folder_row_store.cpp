// Row results kept in a folder, one checked file per row.
#include "orderband/folder_row_store.hpp"

#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <fstream>

#include "orderband/atomic_file.hpp"
#include "orderband/error.hpp"

namespace fs = std::filesystem;

namespace orderband {

FolderRowStore::FolderRowStore(std::string folder, const std::string& key) : folder_(std::move(folder)) {
  std::error_code ec;
  const std::string key_file = folder_ + "/key";
  std::string old;
  if (std::ifstream in(key_file); in) std::getline(in, old);
  if (old != key) {
    fs::remove_all(folder_, ec);
    fs::create_directories(folder_, ec);
    if (ec) fail("cannot create resume folder '", folder_, "': ", ec.message());
    write_text_atomically(key_file, key + "\n");
  }
}

namespace {

/// FNV-1a 64 over the row file's name part and its bytes: ties the bytes to their stage and row.
uint64_t row_check(const std::string& stage, int row, const uint8_t* bytes, size_t size) {
  uint64_t h = 1469598103934665603ull;
  auto add = [&](uint8_t c) { h = (h ^ c) * 1099511628211ull; };
  for (char c : stage + "-" + std::to_string(row) + ":") add(static_cast<uint8_t>(c));
  for (size_t k = 0; k < size; ++k) add(bytes[k]);
  return h;
}

}  // namespace

bool FolderRowStore::load(const std::string& stage, int row, std::vector<uint8_t>& bytes) {
  std::ifstream in(folder_ + "/" + stage + "-" + std::to_string(row) + ".bin", std::ios::binary);
  if (!in) return false;
  bytes.assign(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
  uint64_t stored = 0;
  const bool sound = bytes.size() >= sizeof stored &&
                     (std::copy(bytes.end() - sizeof stored, bytes.end(), reinterpret_cast<uint8_t*>(&stored)),
                      stored == row_check(stage, row, bytes.data(), bytes.size() - sizeof stored));
  if (!sound) {
    ++damaged_;
    bytes.clear();
    return false;
  }
  bytes.resize(bytes.size() - sizeof stored);
  ++found_;
  return true;
}

void FolderRowStore::save(const std::string& stage, int row, const std::vector<uint8_t>& bytes) {
  const uint64_t check = row_check(stage, row, bytes.data(), bytes.size());
  write_atomically(folder_ + "/" + stage + "-" + std::to_string(row) + ".bin", [&](const std::string& temp) {
    std::ofstream out(temp, std::ios::binary);
    out.write(reinterpret_cast<const char*>(bytes.data()), static_cast<std::streamsize>(bytes.size()));
    out.write(reinterpret_cast<const char*>(&check), sizeof check);
    finish_writing(out, "resume data " + temp);
  });
}

void FolderRowStore::clear() {
  std::error_code ec;
  fs::remove_all(folder_, ec);
}

}  // namespace orderband
