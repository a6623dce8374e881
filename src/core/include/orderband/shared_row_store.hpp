// Row results shared among the processes of one run: each computes a block of rows and receives
// the others' rows after every pass.
#pragma once

#include <map>
#include <string>
#include <utility>
#include <vector>

#include "orderband/process_share.hpp"
#include "orderband/row_store.hpp"

namespace orderband {

/// A RowStore whose rows are computed in contiguous blocks, one per process (ProcessShare::block_of). Saved rows go to
/// `inner` (which keeps them for a resumed run; may be null) and are kept for the exchange; after
/// a stage's pass, `share_rows` gives every process the rows the others computed in it, and
/// `load` returns those first, then the inner store's.
class SharedRowStore final : public RowStore {
 public:
  SharedRowStore(RowStore* inner, ProcessShare share, int rows);
  bool load(const std::string& stage, int row, std::vector<uint8_t>& bytes) override;
  void save(const std::string& stage, int row, const std::vector<uint8_t>& bytes) override;
  bool computes(int row) const override { return row >= first_ && row < last_; }
  bool warms_up(int row) const override { return row == first_ - 1 && first_ < last_; }
  void share_rows(const std::string& stage) override;

 private:
  RowStore* inner_;
  ProcessShare share_;
  int first_ = 0, last_ = 0;
  std::map<std::pair<std::string, int>, std::vector<uint8_t>> computed_, received_;
};

}  // namespace orderband
