// Temporary file + rename.
#include "orderband/atomic_file.hpp"

#include <unistd.h>

#include <atomic>
#include <filesystem>
#include <fstream>

#include "orderband/error.hpp"

namespace fs = std::filesystem;

namespace orderband {

void write_atomically(const std::string& path, const std::function<void(const std::string&)>& write) {
  static std::atomic<unsigned> counter{0};
  const fs::path target(path);
  const fs::path temp = target.parent_path() / ("." + target.filename().string() + ".tmp-" +
                                                std::to_string(::getpid()) + "-" + std::to_string(counter++));
  try {
    write(temp.string());
    std::error_code ec;
    fs::rename(temp, target, ec);
    if (ec) fail("cannot write '", path, "': ", ec.message());
  } catch (...) {
    std::error_code ignored;
    fs::remove(temp, ignored);
    throw;
  }
}

void write_text_atomically(const std::string& path, const std::string& content) {
  write_atomically(path, [&](const std::string& temp) {
    std::ofstream out(temp, std::ios::binary);
    if (!out) fail("cannot create '", temp, "' (folder missing or not writable?)");
    out << content;
    out.close();
    if (!out) fail("error while writing '", path, "' (disk full?)");
  });
}

}  // namespace orderband
