// Whole-file reading.
#include "orderband/text_file.hpp"

#include <fstream>
#include <sstream>

#include "orderband/error.hpp"
#include "orderband/input_file.hpp"

namespace orderband {

std::string read_text_file(const std::string& path, const std::string& what) {
  require_regular_file(path, what + " file");
  std::ifstream in(path, std::ios::binary);
  if (!in) fail("cannot read ", what, " '", path, "' (missing or unreadable)");
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

}  // namespace orderband
