// Hashes of input files and texts, for provenance and resume keys.
#pragma once

#include <string>

namespace orderband {

/// 64-bit FNV-1a hash of a file's bytes, streamed (for provenance and resume keys), as 16 hex digits.
std::string file_hash_fnv1a64(const std::string& path);
std::string text_hash_fnv1a64(const std::string& text);
/// 64-bit FNV-1a over a folder's regular files in name order: each file's name and bytes (a folder
/// of pattern images: renaming, adding, removing or changing any image changes it).
std::string folder_hash_fnv1a64(const std::string& folder);

}  // namespace orderband
