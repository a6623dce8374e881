// One scan mapped into an output folder, as `orderband map` does it: locked, resumable, complete.
#pragma once

#include <cstddef>
#include <string>

#include "orderband/map_scan.hpp"
#include "orderband/process_share.hpp"

namespace orderband {

struct MapFolderRun {
  MapResults results;
  size_t rows_resumed = 0;  ///< row results taken from an interrupted run
  size_t rows_damaged = 0;  ///< row results found damaged and computed again
};

/// A key of everything that determines a map's results: the tool version, the hash of every
/// input file (ScanInputs::input_hash, which must have been computed) and every parameter as the
/// summary records it (options_for_scan applied). A folder whose key is unchanged holds results
/// that a new run would reproduce.
std::string map_run_key(const ScanInputs& inputs, const MapOptions& options);

/// Maps a scan into `folder`: one run at a time per folder (a lock held while it runs), every
/// finished row kept in folder/.resume under `key` (a different key starts afresh), so that an
/// interrupted run continues where it stopped with byte-identical outputs; every output of `map`
/// written (write_map_outputs, with `command_line` as provenance); the resume rows removed at
/// the end. `key` must change with anything that changes the results (inputs, options, version).
/// Shared among processes (`share`; every one calls it with the same arguments), the row passes are
/// cut into one block of rows per process (SharedRowStore), the steps between them run in every
/// process on the gathered rows, and rank 0 alone locks the folder and writes the outputs; the
/// others return the same results.
MapFolderRun map_to_folder(const ScanInputs& inputs, const std::string& folder, const MapOptions& options,
                           const std::string& key, const std::string& command_line, const StageProgress& progress = {},
                           const ProcessShare& share = {});

}  // namespace orderband
