// Atomic output: write to a temporary file beside the target, then rename.
#pragma once

#include <fstream>
#include <functional>
#include <string>

namespace orderband {

/// Calls `write(temp_path)` to produce the file, then renames it to `path`
/// (same folder, so the rename is atomic). On any exception the temporary
/// file is removed and the target is left as it was.
void write_atomically(const std::string& path, const std::function<void(const std::string& temp_path)>& write);

/// Closes `out` (flushing what it buffers) and throws orderband::Error naming `path` if anything
/// failed, with the system's reason ("No space left on device" when the disk is full).
void finish_writing(std::ofstream& out, const std::string& path);

/// Writes `content` to `path` atomically.
void write_text_atomically(const std::string& path, const std::string& content);

}  // namespace orderband
