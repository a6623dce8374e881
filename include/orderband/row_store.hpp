// Persistence of per-row results, so that an interrupted run continues where it stopped.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace orderband {

/// Where a stage keeps the results of each finished scan row. A stage asks `load`
/// before computing a row and calls `save` after; rows found are not computed again.
class RowStore {
 public:
  virtual ~RowStore() = default;
  virtual bool load(const std::string& stage, int row, std::vector<uint8_t>& bytes) = 0;
  virtual void save(const std::string& stage, int row, const std::vector<uint8_t>& bytes) = 0;
};

/// One file per (stage, row) in a folder, each written atomically; the folder is tied to a key
/// (a hash of the inputs and parameters): a different key clears it. Each file ends with a 64-bit
/// FNV-1a check over its stage, row and bytes: a file damaged on disk or moved to another row's name
/// is not taken; its row is computed again (counted in `rows_damaged`).
class FolderRowStore final : public RowStore {
 public:
  FolderRowStore(std::string folder, const std::string& key);
  bool load(const std::string& stage, int row, std::vector<uint8_t>& bytes) override;
  void save(const std::string& stage, int row, const std::vector<uint8_t>& bytes) override;
  /// Removes the folder (after a complete run).
  void clear();
  size_t rows_found() const { return found_; }
  size_t rows_damaged() const { return damaged_; }

 private:
  std::string folder_;
  size_t found_ = 0, damaged_ = 0;
};

/// Little helpers to pack plain values into bytes and back.
class ByteWriter {
 public:
  template <class T>
  void put(const T& v) {
    const auto* p = reinterpret_cast<const uint8_t*>(&v);
    bytes.insert(bytes.end(), p, p + sizeof(T));
  }
  std::vector<uint8_t> bytes;
};
class ByteReader {
 public:
  explicit ByteReader(const std::vector<uint8_t>& b) : bytes_(b) {}
  template <class T>
  T get() {
    T v{};
    if (pos_ + sizeof(T) > bytes_.size()) throw_short();
    std::copy(bytes_.begin() + pos_, bytes_.begin() + pos_ + sizeof(T), reinterpret_cast<uint8_t*>(&v));
    pos_ += sizeof(T);
    return v;
  }

 private:
  [[noreturn]] void throw_short() const;
  const std::vector<uint8_t>& bytes_;
  size_t pos_ = 0;
};

/// 64-bit FNV-1a hash of a file's bytes, streamed (for provenance and resume keys), as 16 hex digits.
std::string file_hash_fnv1a64(const std::string& path);
std::string text_hash_fnv1a64(const std::string& text);
/// 64-bit FNV-1a over a folder's regular files in name order: each file's name and bytes (a folder
/// of pattern images: renaming, adding, removing or changing any image changes it).
std::string folder_hash_fnv1a64(const std::string& folder);

}  // namespace orderband
