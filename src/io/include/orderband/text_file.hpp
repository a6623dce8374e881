// Reading a whole file into memory, with one clear error when it cannot be read.
#pragma once

#include <string>

namespace orderband {

/// The file's bytes; throws orderband::Error naming `what` and the path if it cannot be read.
std::string read_text_file(const std::string& path, const std::string& what);

}  // namespace orderband
