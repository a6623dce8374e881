// The scan description: grid, patterns, geometry, voltage, phases, orientations, preprocessing, output.
#pragma once

#include <array>
#include <optional>
#include <string>
#include <vector>

#include "orderband/detection_limit.hpp"
#include "orderband/detector_geometry.hpp"
#include "orderband/enum_names.hpp"
#include "orderband/pattern_source.hpp"
#include "orderband/preprocess.hpp"
#include "orderband/scan_grid.hpp"

namespace orderband {

/// The ordered/disordered pair: a named pair from crystal-data/pairs.toml or
/// two CIF files (absolute paths after reading).
struct PhaseSelection {
  std::string pair_name;  ///< e.g. "ni"; empty when files are given
  std::string ordered_cif, disordered_cif;
};

enum class OrientationSourceKind { find, file };
template <>
struct EnumNames<OrientationSourceKind> {
  static constexpr std::array<std::pair<OrientationSourceKind, std::string_view>, 2> names{
      {{OrientationSourceKind::find, "find"}, {OrientationSourceKind::file, "file"}}};
};

struct OrientationSelection {
  OrientationSourceKind source = OrientationSourceKind::find;
  std::string file;  ///< CSV (absolute path) when source = file
  bool refine = true;
};

/// How the fraction's end members are fixed ([fraction] in the description).
struct EndMemberSelection {
  std::string mode = "model";  ///< "model", "mixture" or "regions"
  /// Rectangles of points [row0, col0, row1, col1] (inclusive) known to be ordered / disordered.
  std::vector<std::array<int, 4>> ordered_regions, disordered_regions;
  /// Mask files (absolute paths, empty: none) of the scan's rows × cols: .npy, or a greyscale PNG or
  /// TIFF of cols × rows pixels; non-zero marks a reference point (point_mask.hpp).
  std::string ordered_mask, disordered_mask;
};

/// The beam's footprint on the sample ([scan] beam_sigma_nm, beam_elongation): a Gaussian of σ
/// across the tilt direction (x_S, along the rows of points), stretched along it (y_S) by the
/// elongation, by default 1 / cos(sample tilt) (about 2.9 at 70°; common practice, no source).
struct BeamSpec {
  double sigma_nm = 10;              ///< common practice for 20 kV on nickel alloys, no source
  std::optional<double> elongation;  ///< unset: 1 / cos(sample tilt)
};

struct ScanConfig {
  std::string path;    ///< the description file
  std::string folder;  ///< its folder: relative paths resolve against it
  ScanGrid grid;
  BeamSpec beam;
  PatternSourceSpec patterns;
  DetectorGeometrySpec geometry;  ///< width/height filled from [patterns] or the data
  double kv = 20.0;
  PhaseSelection phases;
  OrientationSelection orientations;
  PreprocessSpec preprocess;
  EndMemberSelection end_members;
  bool refine_pattern_centre = true;  ///< [fraction]: refine PC and distance on the grains' mean patterns
  std::string output_folder;          ///< absolute
};

/// The beam footprint of the scan (µm).
BeamFootprint beam_footprint(const ScanConfig& config);

/// How far the beam reaches on the grid: two standard deviations of its footprint along the rows
/// and along the columns, in grid steps, at least one step.
struct GridReach {
  int rows = 1, cols = 1;
};
GridReach beam_reach(const ScanConfig& config);

/// The scan's detector geometry for patterns of the given stored size.
DetectorGeometrySpec geometry_for(const ScanConfig& config, int width_px, int height_px);

}  // namespace orderband
