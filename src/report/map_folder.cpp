// One scan mapped into an output folder: locked, resumable, complete.
#include "orderband/map_folder.hpp"

#include <optional>

#include "orderband/error.hpp"
#include "orderband/folder_lock.hpp"
#include "orderband/folder_row_store.hpp"
#include "orderband/input_hash.hpp"
#include "orderband/map_output.hpp"
#include "orderband/map_scan.hpp"
#include "orderband/shared_row_store.hpp"
#include "orderband/version.hpp"

namespace orderband {

std::string map_run_key(const ScanInputs& inputs, const MapOptions& options) {
  if (inputs.input_hash.empty()) fail("internal: the scan's inputs were read without their hash");
  return text_hash_fnv1a64(std::string(kVersion) + '|' + inputs.input_hash + '|' +
                           map_parameters_text(inputs, options_for_scan(options, inputs)));
}

MapFolderRun map_to_folder(const ScanInputs& inputs, const std::string& folder, const MapOptions& options,
                           const std::string& key, const std::string& command_line, const StageProgress& progress,
                           const ProcessShare& share) {
  // Rank 0 holds the folder's lock and prepares the resume rows (a new key empties them) before
  // the other processes open them.
  std::optional<FolderLock> lock;
  std::optional<FolderRowStore> rows;
  if (share.rank == 0) lock.emplace(folder), rows.emplace(folder + "/.resume", key);
  share.wait_for_all();
  if (share.rank != 0) rows.emplace(folder + "/.resume", key);
  SharedRowStore store(&*rows, share, inputs.config.grid.rows);
  MapFolderRun run{map_scan(inputs, options, progress, &store, share), rows->rows_found(), rows->rows_damaged()};
  share.wait_for_all();  // every process is done with the resume rows
  if (share.rank != 0) return run;
  if (!run.results.measured_any()) {
    write_unmeasured_summary(folder, inputs.config, run.results, run.results.options, command_line);
    rows->clear();
    fail(no_usable_point_sentence(run.results), "; ", folder, "/summary.json lists the points by reason");
  }
  write_map_outputs(folder, inputs.config, run.results, run.results.options, command_line);
  rows->clear();
  return run;
}

}  // namespace orderband
