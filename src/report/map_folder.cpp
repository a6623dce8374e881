// One scan mapped into an output folder: locked, resumable, complete.
#include "orderband/map_folder.hpp"

#include "orderband/folder_lock.hpp"
#include "orderband/folder_row_store.hpp"
#include "orderband/map_output.hpp"

namespace orderband {

MapFolderRun map_to_folder(const ScanInputs& inputs, const std::string& folder, const MapOptions& options,
                           const std::string& key, const std::string& command_line, const StageProgress& progress) {
  const FolderLock lock(folder);
  FolderRowStore store(folder + "/.resume", key);
  MapFolderRun run{map_scan(inputs, options, progress, &store), store.rows_found(), store.rows_damaged()};
  write_map_outputs(folder, inputs.config, run.results, run.results.options, command_line);
  store.clear();
  return run;
}

}  // namespace orderband
