// Internal: the per-row loop of a resumable stage (restore a saved row, or compute and save it).
#pragma once

#include <vector>

#include "orderband/error.hpp"
#include "orderband/preprocess.hpp"
#include "orderband/row_store.hpp"

namespace orderband {

/// Streams the preprocessed rows of a scan. Each row is taken from the store when an earlier run
/// saved it (`restore(row, reader)`; its patterns are not read), else computed (`compute(row,
/// patterns, usable)`) and saved (`save(row, writer)`); progress is reported after every row. A row
/// the store leaves to another process (RowStore::computes) is restored after the pass, once the
/// store has shared the rows; the one above this process's first row is computed all the same
/// (RowStore::warms_up), so that a row started from the row above starts as with one process.
template <class Restore, class Compute, class Save>
void for_each_scan_row(PreprocessedRows& rows, const ScanGrid& grid, RowStore* store, const char* stage,
                       const ProgressFn& progress, Restore&& restore, Compute&& compute, Save&& save) {
  std::vector<float> patterns;
  std::vector<uint8_t> usable, saved;
  std::vector<int> elsewhere;
  for (int row = rows.next_row(); row < grid.rows; ++row) {
    // Rows restored or left to another process are not read.
    if (store && store->load(stage, row, saved)) {
      rows.skip();
      ByteReader in(saved);
      restore(row, in);
    } else if (store && !store->computes(row)) {
      if (store->warms_up(row))
        rows.next(patterns, usable), compute(row, patterns, usable);
      else
        rows.skip();
      elsewhere.push_back(row);
    } else {
      rows.next(patterns, usable);
      compute(row, patterns, usable);
      if (store) {
        ByteWriter out;
        save(row, out);
        store->save(stage, row, out.bytes);
      }
    }
    if (progress) progress(static_cast<size_t>(row + 1) * grid.cols, grid.count());
  }
  if (!store) return;
  store->share_rows(stage);
  for (int r : elsewhere) {
    if (!store->load(stage, r, saved)) fail("row ", r, " of ", stage, " came from no process");
    ByteReader in(saved);
    restore(r, in);
  }
}

}  // namespace orderband
