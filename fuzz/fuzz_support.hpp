// Fuzz targets' shared part: an input as text or as a file, and the one outcome a parser may
// have besides success, orderband::Error (a clear message for the user). Anything else, a
// crash, a sanitizer report, another exception, a hang, is a finding.
#pragma once

#include <unistd.h>
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <fstream>
#include <string>

#include "orderband/error.hpp"

namespace orderband::fuzz {

inline std::string as_text(const uint8_t* data, size_t size) {
  return std::string(reinterpret_cast<const char*>(data), size);
}

/// The input written to a file of this process (for parsers that read a path), with `suffix`.
inline std::string as_file(const uint8_t* data, size_t size, const std::string& suffix) {
  const std::string path = "/tmp/orderband-fuzz-" + std::to_string(getpid()) + suffix;
  std::ofstream(path, std::ios::binary | std::ios::trunc).write(reinterpret_cast<const char*>(data), size);
  return path;
}

/// Runs `parse`; an orderband::Error must carry a message.
template <class F>
int expect_result_or_error(F&& parse) {
  try {
    parse();
  } catch (const Error& e) {
    if (std::string(e.what()).empty()) __builtin_trap();
  }
  return 0;
}

}  // namespace orderband::fuzz
