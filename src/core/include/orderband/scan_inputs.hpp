// One scan's inputs, read once per run: every stage of `map` takes them.
#pragma once

#include <cstdint>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "orderband/ordering_pair.hpp"
#include "orderband/orientation_table.hpp"
#include "orderband/pattern_source.hpp"
#include "orderband/preprocess.hpp"
#include "orderband/scan_config.hpp"

namespace orderband {

/// Everything a scan description points at, opened or read once (the io layer's
/// `read_scan_inputs` builds it from the description's files). The stages compute from it
/// and never open a file themselves.
struct ScanInputs {
  ScanConfig config;  ///< the description; its geometry's size is that of the stored patterns
  std::shared_ptr<PatternSource> patterns;
  OrderingPair phases;
  PreprocessImages preprocess_images;                  ///< the pattern mask and background images it names
  std::optional<OrientationTable> given_orientations;  ///< [orientations] source = "file"
  std::vector<uint8_t> ordered_mask, disordered_mask;  ///< [fraction] mask files, one value per point; empty: none
  /// 64-bit FNV-1a over every input file (description, patterns, CIFs or pair name, orientation
  /// table, point masks, pattern mask, background image) as 16 hex digits; empty when not hashed.
  std::string input_hash;
  /// Each input file's own FNV-1a hash by path (empty when not hashed): the summary records them
  /// without reading the files again.
  std::map<std::string, std::string> file_hashes;

  const ScanGrid& grid() const { return config.grid; }
  /// The detector geometry for the stored patterns.
  DetectorGeometrySpec geometry() const;
  /// The preprocessor the description asks for, built on first use and then shared by every
  /// stage: a scan-mean background costs one pass over the stack per run, not one per stage.
  /// The first call must not race another (the stages call it from the calling thread).
  const Preprocessor& preprocessor(const ProgressFn& progress = {}) const;
  /// A preprocessor with the given spec in place of the description's (built anew each call).
  Preprocessor preprocessor(const PreprocessSpec& spec, const ProgressFn& progress = {}) const;

  /// Internal: the shared preprocessor, once built.
  mutable std::shared_ptr<const Preprocessor> shared_preprocessor;
};

}  // namespace orderband
