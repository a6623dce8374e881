// Row results shared among the processes of one run.
#include "orderband/shared_row_store.hpp"

#include <cstring>

#include "orderband/error.hpp"

namespace orderband {

SharedRowStore::SharedRowStore(RowStore* inner, ProcessShare share, int rows)
    : inner_(inner), share_(std::move(share)) {
  if (share_.processes < 1 || share_.rank < 0 || share_.rank >= share_.processes)
    fail("process ", share_.rank, " of ", share_.processes, " is not a valid share");
  if (share_.shared() && !share_.all_gather) fail("rows shared among ", share_.processes, " processes need a gather");
  const auto [first, last] = share_.block_of(static_cast<size_t>(rows));
  first_ = static_cast<int>(first), last_ = static_cast<int>(last);
}

bool SharedRowStore::load(const std::string& stage, int row, std::vector<uint8_t>& bytes) {
  if (const auto it = received_.find({stage, row}); it != received_.end()) {
    bytes = it->second;
    return true;
  }
  return inner_ && inner_->load(stage, row, bytes);
}

void SharedRowStore::save(const std::string& stage, int row, const std::vector<uint8_t>& bytes) {
  if (inner_) inner_->save(stage, row, bytes);
  if (share_.shared()) computed_[{stage, row}] = bytes;
}

void SharedRowStore::share_rows(const std::string& stage) {
  if (!share_.shared()) return;
  // This process's rows of the stage as (row, size, bytes) records.
  ByteWriter out;
  for (auto it = computed_.lower_bound({stage, 0}); it != computed_.end() && it->first.first == stage;) {
    out.put<int32_t>(it->first.second);
    out.put<uint64_t>(it->second.size());
    out.bytes.insert(out.bytes.end(), it->second.begin(), it->second.end());
    it = computed_.erase(it);
  }
  const std::vector<std::vector<uint8_t>> all = share_.all_gather(out.bytes);
  for (int rank = 0; rank < static_cast<int>(all.size()); ++rank) {
    if (rank == share_.rank) continue;
    const std::vector<uint8_t>& records = all[static_cast<size_t>(rank)];
    size_t pos = 0;
    while (pos < records.size()) {
      int32_t row = 0;
      uint64_t size = 0;
      if (pos + sizeof row + sizeof size > records.size()) fail("process ", rank, " sent damaged rows of ", stage);
      std::memcpy(&row, records.data() + pos, sizeof row), pos += sizeof row;
      std::memcpy(&size, records.data() + pos, sizeof size), pos += sizeof size;
      if (size > records.size() - pos) fail("process ", rank, " sent damaged rows of ", stage);
      received_[{stage, row}].assign(records.begin() + static_cast<std::ptrdiff_t>(pos),
                                     records.begin() + static_cast<std::ptrdiff_t>(pos + size));
      pos += size;
    }
  }
}

}  // namespace orderband
