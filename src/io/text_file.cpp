// Whole-file reading.
#include "orderband/text_file.hpp"

#include <filesystem>
#include <fstream>
#include <sstream>

#include "orderband/error.hpp"

namespace orderband {

std::string read_text_file(const std::string& path, const std::string& what) {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) fail("'", path, "' is a folder, not a ", what, " file");
  std::ifstream in(path, std::ios::binary);
  if (!in) fail("cannot read ", what, " '", path, "' (missing or unreadable)");
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

}  // namespace orderband
