// Temporary file + rename.
#include "orderband/atomic_file.hpp"

#include <unistd.h>

#include <atomic>
#include <cerrno>
#include <cstring>
#include <filesystem>
#include <fstream>

#include "orderband/error.hpp"

namespace fs = std::filesystem;

namespace orderband {

void write_atomically(const std::string& path, const std::function<void(const std::string&)>& write) {
  static std::atomic<unsigned> counter{0};
  const fs::path target(path);
  std::string name = ".";  // built step by step: one concatenated expression trips a false -Wrestrict in GCC 12
  name += target.filename().string();
  name += ".tmp-" + std::to_string(::getpid()) + "-" + std::to_string(counter++);
  const fs::path temp = target.parent_path() / name;
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

void finish_writing(std::ofstream& out, const std::string& path) {
  errno = 0;
  if (out) out.flush();
  out.close();
  if (!out) {
    const int e = errno;
    fail("error while writing '", path, "': ", e ? std::strerror(e) : "the write failed (disk full?)");
  }
}

void write_text_atomically(const std::string& path, const std::string& content) {
  write_atomically(path, [&](const std::string& temp) {
    std::ofstream out(temp, std::ios::binary);
    if (!out) fail("cannot create '", temp, "' (folder missing or not writable?)");
    out << content;
    finish_writing(out, path);
  });
}

}  // namespace orderband
