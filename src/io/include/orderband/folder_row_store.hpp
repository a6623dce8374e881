// Row results kept in a folder, so that an interrupted run continues where it stopped.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "orderband/row_store.hpp"

namespace orderband {

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

}  // namespace orderband
