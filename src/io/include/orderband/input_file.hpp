// An input path checked before it is opened: present, and a regular file (never a folder, FIFO or device).
#pragma once

#include <string>

namespace orderband {

/// Throws orderband::Error naming `what` and the path when the path is missing, a folder, or not a
/// regular file (a FIFO would block the reader until some other program writes to it; a device has
/// no size). Checked with stat(), which never blocks.
void require_regular_file(const std::string& path, const std::string& what);

}  // namespace orderband
