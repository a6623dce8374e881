// Input paths checked before they are opened.
#include "orderband/input_file.hpp"

#include <sys/stat.h>

#include "orderband/error.hpp"

namespace orderband {

void require_regular_file(const std::string& path, const std::string& what) {
  struct stat st {};
  if (::stat(path.c_str(), &st) != 0) fail("cannot read ", what, " '", path, "' (missing or unreadable)");
  if (S_ISDIR(st.st_mode)) fail("'", path, "' is a folder, not a ", what);
  if (!S_ISREG(st.st_mode))
    fail("'", path, "' is not a regular file (a pipe, socket or device); the ", what, " must be on disk");
}

}  // namespace orderband
