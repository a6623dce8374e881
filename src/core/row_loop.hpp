// Internal: the per-row loop of a resumable stage (restore a saved row, or compute and save it).
#pragma once

#include <vector>

#include "orderband/preprocess.hpp"
#include "orderband/row_store.hpp"

namespace orderband {

/// Streams the preprocessed rows of a scan. Each row is taken from the store when an earlier run
/// saved it (`restore(row, reader)`), else computed (`compute(row, patterns, usable)`) and saved
/// (`save(row, writer)`); progress is reported after every row.
template <class Restore, class Compute, class Save>
void for_each_scan_row(PreprocessedRows& rows, const ScanGrid& grid, RowStore* store, const char* stage,
                       const ProgressFn& progress, Restore&& restore, Compute&& compute, Save&& save) {
  std::vector<float> patterns;
  std::vector<uint8_t> usable, saved;
  int row = 0;
  while (rows.next(patterns, usable)) {
    if (store && store->load(stage, row, saved)) {
      ByteReader in(saved);
      restore(row, in);
    } else {
      compute(row, patterns, usable);
      if (store) {
        ByteWriter out;
        save(row, out);
        store->save(stage, row, out.bytes);
      }
    }
    ++row;
    if (progress) progress(static_cast<size_t>(row) * grid.cols, grid.count());
  }
}

}  // namespace orderband
