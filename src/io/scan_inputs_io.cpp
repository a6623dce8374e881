// Reading one scan's inputs from the files its description names.
#include "orderband/scan_inputs_io.hpp"

#include <array>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>
#include <vector>

#include "orderband/error.hpp"
#include "orderband/image_io.hpp"
#include "orderband/input_file.hpp"
#include "orderband/input_hash.hpp"
#include "orderband/orientation_csv.hpp"
#include "orderband/pair_catalog.hpp"
#include "orderband/pattern_files.hpp"
#include "orderband/point_mask.hpp"

namespace fs = std::filesystem;

namespace orderband {
namespace {

OrientationTable read_orientation_file(const std::string& path, const ScanGrid& grid) {
  require_regular_file(path, "orientation file");
  std::ifstream in(path);
  if (!in) fail("cannot read orientation file '", path, "'");
  return read_orientation_csv(in, grid, path);
}

/// The reference points on one side: its rectangles and its mask, one flag per point.
std::vector<uint8_t> reference_points(const std::vector<std::array<int, 4>>& rects, const std::vector<uint8_t>& mask,
                                      const ScanGrid& grid) {
  std::vector<uint8_t> in = mask.empty() ? std::vector<uint8_t>(grid.count(), 0) : mask;
  for (const auto& r : rects)
    for (int row = r[0]; row <= r[2]; ++row)
      for (int col = r[1]; col <= r[3]; ++col) in[grid.index({row, col})] = 1;
  return in;
}

/// A point cannot be known to be both ordered and disordered: the two reference sides (regions
/// and masks together) must not share one.
void require_separate_references(const ScanConfig& config, const ScanInputs& in) {
  const EndMemberSelection& e = config.end_members;
  const std::vector<uint8_t> ordered = reference_points(e.ordered_regions, in.ordered_mask, config.grid),
                             disordered = reference_points(e.disordered_regions, in.disordered_mask, config.grid);
  size_t shared = 0, first = 0;
  for (size_t k = 0; k < ordered.size(); ++k)
    if (ordered[k] && disordered[k] && shared++ == 0) first = k;
  if (shared)
    fail(config.path, ": [fraction] the ordered and disordered references share ", shared, " point",
         shared == 1 ? "" : "s", " (first: row ", config.grid.point(first).row, ", col ", config.grid.point(first).col,
         "); a point is known to be one or the other");
}

PreprocessImages read_preprocess_images(const PreprocessSpec& spec) {
  PreprocessImages images;
  if (spec.mask == MaskKind::file) images.mask = read_gray_image(spec.mask_file);
  if (spec.static_background == StaticBackgroundKind::file)
    images.static_background = read_gray_image(spec.static_background_file);
  return images;
}

/// The files a description names (a path that is empty names no file).
std::vector<std::string> input_files(const ScanConfig& config) {
  const PreprocessSpec& p = config.preprocess;
  std::vector<std::string> files{config.path, config.patterns.path};
  if (config.phases.pair_name.empty())
    files.insert(files.end(), {config.phases.ordered_cif, config.phases.disordered_cif});
  if (config.orientations.source == OrientationSourceKind::file) files.push_back(config.orientations.file);
  files.insert(files.end(), {config.end_members.ordered_mask, config.end_members.disordered_mask});
  if (p.mask == MaskKind::file) files.push_back(p.mask_file);
  if (p.static_background == StaticBackgroundKind::file) files.push_back(p.static_background_file);
  return files;
}

/// The combined hash from the files' own; every field is separated so that moving a file from one
/// role to another changes the whole.
std::string combined_hash(const ScanConfig& config, const std::map<std::string, std::string>& files) {
  auto hash_of = [&](const std::string& path) { return path.empty() ? std::string("-") : files.at(path); };
  std::ostringstream k;
  const bool cif_files = config.phases.pair_name.empty();
  const PreprocessSpec& p = config.preprocess;
  k << hash_of(config.path) << '|' << hash_of(config.patterns.path) << '|'
    << (cif_files ? hash_of(config.phases.ordered_cif) + hash_of(config.phases.disordered_cif)
                  : config.phases.pair_name)
    << '|' << (config.orientations.source == OrientationSourceKind::file ? hash_of(config.orientations.file) : "find")
    << '|' << hash_of(config.end_members.ordered_mask) << '|' << hash_of(config.end_members.disordered_mask) << '|'
    << (p.mask == MaskKind::file ? hash_of(p.mask_file) : "-") << '|'
    << (p.static_background == StaticBackgroundKind::file ? hash_of(p.static_background_file) : "-");
  return text_hash_fnv1a64(k.str());
}

}  // namespace

std::map<std::string, std::string> input_file_hashes(const ScanConfig& config) {
  std::map<std::string, std::string> hashes;
  for (const std::string& path : input_files(config))
    if (!path.empty() && !hashes.count(path))
      hashes[path] = fs::is_directory(path) ? folder_hash_fnv1a64(path) : file_hash_fnv1a64(path);
  return hashes;
}

std::string scan_input_hash(const ScanConfig& config) { return combined_hash(config, input_file_hashes(config)); }

ScanInputs read_scan_inputs(const ScanConfig& config, InputHashing hashing) {
  config.grid.validate();
  ScanInputs in;
  in.config = config;
  in.patterns = open_pattern_source(config.patterns, config.grid);
  in.config.geometry = in.geometry();
  in.phases = load_phases(config.phases);
  in.preprocess_images = read_preprocess_images(config.preprocess);
  if (config.orientations.source == OrientationSourceKind::file)
    in.given_orientations = read_orientation_file(config.orientations.file, config.grid);
  if (!config.end_members.ordered_mask.empty())
    in.ordered_mask = read_point_mask(config.end_members.ordered_mask, config.grid);
  if (!config.end_members.disordered_mask.empty())
    in.disordered_mask = read_point_mask(config.end_members.disordered_mask, config.grid);
  require_separate_references(config, in);
  if (hashing == InputHashing::hash) {
    in.file_hashes = input_file_hashes(config);
    in.input_hash = combined_hash(config, in.file_hashes);
  }
  return in;
}

}  // namespace orderband
