// Reading and writing the scan description (TOML).
#include <toml++/toml.h>
#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>

#include "orderband/enum_names.hpp"
#include "orderband/error.hpp"
#include "orderband/ordered_fraction.hpp"
#include "orderband/scan_config_toml.hpp"
#include "toml_reader.hpp"

namespace fs = std::filesystem;

namespace orderband {
namespace {

/// A number read from the description: finite and inside [lo, hi] (the named limits, listed in
/// README), or one clear error naming the table, the key, the value and the range.
double within(const std::string& path, const char* table, const char* key, double v, double lo, double hi,
              const char* unit) {
  if (!std::isfinite(v) || v < lo || v > hi)
    fail(path, ": [", table, "] ", key, " must be a finite number within [", lo, ", ", hi, "] ", unit, ", got ", v);
  return v;
}

/// A named choice: the default when the key is absent, else one of the enum's names (an Error
/// names them all).
template <class E>
E read_choice(TomlReader& r, const toml::table* t, const std::string& path, const char* table, const char* key,
              E fallback) {
  const std::optional<std::string> name = r.get<std::string>(t, table, key);
  if (!name) return fallback;
  if (const auto v = enum_from_name<E>(*name)) return *v;
  fail(path, ": [", table, "] ", key, " = \"", *name, "\" is not ", enum_name_list<E>());
}

/// [scan]: the grid and the beam.
void read_scan_table(TomlReader& r, const std::string& path, ScanConfig& c) {
  const toml::table* scan = r.table("scan", true);
  r.check_keys(scan, "scan", {"grid", "rows", "cols", "step_um", "beam_sigma_nm", "beam_elongation"});
  c.grid.kind = read_choice(r, scan, path, "scan", "grid", GridKind::square);
  const int64_t rows = r.require<int64_t>(scan, "scan", "rows"), cols = r.require<int64_t>(scan, "scan", "cols");
  if (rows <= 0 || cols <= 0 || rows > 100000 || cols > 100000)
    fail(path, ": [scan] rows and cols must be positive integers, got ", rows, " x ", cols);
  c.grid.rows = static_cast<int>(rows);
  c.grid.cols = static_cast<int>(cols);
  c.grid.step_um = r.require<double>(scan, "scan", "step_um");
  within(path, "scan", "step_um", c.grid.step_um, 1e-4, 1000, "µm");
  c.beam.sigma_nm = r.get<double>(scan, "scan", "beam_sigma_nm").value_or(c.beam.sigma_nm);
  if (!(c.beam.sigma_nm >= 0 && c.beam.sigma_nm <= 1e4))
    fail(path, ": [scan] beam_sigma_nm must be within [0, 10000] nm, got ", c.beam.sigma_nm);
  c.beam.elongation = r.get<double>(scan, "scan", "beam_elongation");
  if (c.beam.elongation && !(*c.beam.elongation >= 1 && *c.beam.elongation <= 20))
    fail(path, ": [scan] beam_elongation must be within [1, 20], got ", *c.beam.elongation);
}

/// [patterns]: where the patterns are and how they are stored.
void read_patterns_table(TomlReader& r, const std::string& path, ScanConfig& c) {
  const toml::table* pat = r.table("patterns", true);
  r.check_keys(pat, "patterns",
               {"format", "file", "sample_type", "header_bytes", "trailer_bytes", "width_px", "height_px", "dataset",
                "name_pattern"});
  r.require<std::string>(pat, "patterns", "format");
  c.patterns.format = read_choice(r, pat, path, "patterns", "format", PatternFormat::raw);
  c.patterns.path = r.resolve(r.require<std::string>(pat, "patterns", "file"));
  if (auto t = r.get<std::string>(pat, "patterns", "sample_type")) {
    try {
      c.patterns.sample_type = parse_sample_type(*t);
    } catch (const Error& e) {
      fail(path, ": [patterns] sample_type: ", e.what());
    }
  }
  const int64_t header = r.get<int64_t>(pat, "patterns", "header_bytes").value_or(0);
  if (header < 0) fail(path, ": [patterns] header_bytes must be >= 0, got ", header);
  c.patterns.header_bytes = static_cast<size_t>(header);
  const int64_t trailer = r.get<int64_t>(pat, "patterns", "trailer_bytes").value_or(0);
  if (trailer < 0) fail(path, ": [patterns] trailer_bytes must be >= 0, got ", trailer);
  c.patterns.trailer_bytes = static_cast<size_t>(trailer);
  c.patterns.width_px = static_cast<int>(r.get<int64_t>(pat, "patterns", "width_px").value_or(0));
  c.patterns.height_px = static_cast<int>(r.get<int64_t>(pat, "patterns", "height_px").value_or(0));
  if (c.patterns.width_px < 0 || c.patterns.height_px < 0)
    fail(path, ": [patterns] width_px and height_px must be positive");
  if (c.patterns.format == PatternFormat::raw && (c.patterns.width_px == 0 || c.patterns.height_px == 0))
    fail(path, ": [patterns] a raw stack needs width_px and height_px");
  c.patterns.dataset = r.get<std::string>(pat, "patterns", "dataset").value_or("");
  if (c.patterns.format == PatternFormat::hdf5 && c.patterns.dataset.empty())
    fail(path, ": [patterns] an HDF5 source needs 'dataset' (the path of the pattern dataset in the file)");
  c.patterns.name_pattern = r.get<std::string>(pat, "patterns", "name_pattern").value_or("");
  if (c.patterns.format == PatternFormat::images && c.patterns.name_pattern.empty())
    fail(path, ": [patterns] an image folder needs 'name_pattern', e.g. \"p_{row:03}_{col:03}.png\"");
}

/// [geometry]: the detector geometry.
void read_geometry_table(TomlReader& r, const std::string& path, ScanConfig& c) {
  const toml::table* geo = r.table("geometry", true);
  r.check_keys(geo, "geometry",
               {"pc_px", "distance_px", "sample_tilt_deg", "detector_tilt_deg", "binning", "screen_pixel_um"});
  const toml::array* pc = geo->get("pc_px") ? geo->get("pc_px")->as_array() : nullptr;
  if (!pc || pc->size() != 2 || !(*pc)[0].value<double>() || !(*pc)[1].value<double>())
    fail(path, ": [geometry] pc_px must be [x, y] in pixels from the top-left corner (x right, y down)");
  c.geometry.pc_px = {within(path, "geometry", "pc_px[0]", *(*pc)[0].value<double>(), -1e5, 1e5, "px"),
                      within(path, "geometry", "pc_px[1]", *(*pc)[1].value<double>(), -1e5, 1e5, "px")};
  c.geometry.distance_px =
      within(path, "geometry", "distance_px", r.require<double>(geo, "geometry", "distance_px"), 1e-3, 1e6, "px");
  c.geometry.sample_tilt_deg = within(path, "geometry", "sample_tilt_deg",
                                      r.get<double>(geo, "geometry", "sample_tilt_deg").value_or(70.0), 0, 89, "°");
  c.geometry.detector_tilt_deg =
      within(path, "geometry", "detector_tilt_deg", r.get<double>(geo, "geometry", "detector_tilt_deg").value_or(0.0),
             -90, 90, "°");
  c.geometry.binning = static_cast<int>(r.get<int64_t>(geo, "geometry", "binning").value_or(1));
  if (auto px = r.get<double>(geo, "geometry", "screen_pixel_um")) c.geometry.screen_pixel_um = *px;
  c.geometry.width_px = c.patterns.width_px;
  c.geometry.height_px = c.patterns.height_px;
}

/// [microscope]: the voltage.
void read_microscope_table(TomlReader& r, const std::string& path, ScanConfig& c) {
  const toml::table* mic = r.table("microscope", false);
  r.check_keys(mic, "microscope", {"kv"});
  c.kv = r.get<double>(mic, "microscope", "kv").value_or(20.0);
  within(path, "microscope", "kv", c.kv, 1, 1000, "kV");
}

/// [phases]: the phase pair: a named pair or two CIF files.
void read_phases_table(TomlReader& r, const std::string& path, ScanConfig& c) {
  const toml::table* ph = r.table("phases", false);
  r.check_keys(ph, "phases", {"pair", "ordered", "disordered"});
  c.phases.pair_name = r.get<std::string>(ph, "phases", "pair").value_or("");
  const auto ord = r.get<std::string>(ph, "phases", "ordered"), dis = r.get<std::string>(ph, "phases", "disordered");
  if (ord || dis) {
    if (!ord || !dis) fail(path, ": [phases] 'ordered' and 'disordered' go together (two CIF files)");
    if (!c.phases.pair_name.empty()) fail(path, ": [phases] give either 'pair' or 'ordered'/'disordered', not both");
    c.phases.ordered_cif = r.resolve(*ord);
    c.phases.disordered_cif = r.resolve(*dis);
    for (const auto& f : {c.phases.ordered_cif, c.phases.disordered_cif})
      if (!fs::exists(f)) fail(path, ": [phases] CIF file '", f, "' does not exist");
  } else if (c.phases.pair_name.empty()) {
    c.phases.pair_name = "ni";
  }
}

/// [orientations]: found, or read from a file.
void read_orientations_table(TomlReader& r, const std::string& path, ScanConfig& c) {
  const toml::table* ori = r.table("orientations", false);
  r.check_keys(ori, "orientations", {"source", "file", "refine"});
  c.orientations.source = read_choice(r, ori, path, "orientations", "source", OrientationSourceKind::find);
  if (auto f = r.get<std::string>(ori, "orientations", "file")) c.orientations.file = r.resolve(*f);
  if (c.orientations.source == OrientationSourceKind::file && c.orientations.file.empty())
    fail(path, ": [orientations] source = \"file\" needs 'file' (a CSV of orientations)");
  c.orientations.refine = r.get<bool>(ori, "orientations", "refine").value_or(true);
}

/// [preprocess]: backgrounds, mask, hot pixels, neighbour averaging.
void read_preprocess_table(TomlReader& r, const std::string& path, ScanConfig& c) {
  const toml::table* pre = r.table("preprocess", false);
  r.check_keys(
      pre, "preprocess",
      {"static_background", "static_background_sigma_px", "dynamic_background_sigma_px", "mask", "mask_radius_px",
       "hot_pixel_filter", "hot_pixel_threshold", "neighbour_sigma_steps", "scan_mean_points"});
  PreprocessSpec& p = c.preprocess;
  const std::string sb = r.get<std::string>(pre, "preprocess", "static_background").value_or("scan_mean");
  if (const auto kind = enum_from_name<StaticBackgroundKind>(sb); kind && *kind != StaticBackgroundKind::file)
    p.static_background = *kind;
  else {
    p.static_background = StaticBackgroundKind::file;
    p.static_background_file = r.resolve(sb);
    if (!fs::exists(p.static_background_file))
      fail(path, ": [preprocess] static_background '", sb,
           "' is not \"scan_mean\", \"none\" or an existing image file");
  }
  // Negative: the default (0.1 × pattern width); 0: off; else at most 1,000 px.
  p.static_background_sigma_px =
      within(path, "preprocess", "static_background_sigma_px",
             r.get<double>(pre, "preprocess", "static_background_sigma_px").value_or(-1.0), -1, 1000, "px");
  p.dynamic_background_sigma_px =
      within(path, "preprocess", "dynamic_background_sigma_px",
             r.get<double>(pre, "preprocess", "dynamic_background_sigma_px").value_or(-1.0), -1, 1000, "px");
  const std::string mask = r.get<std::string>(pre, "preprocess", "mask").value_or("circle");
  if (const auto kind = enum_from_name<MaskKind>(mask); kind && *kind != MaskKind::file)
    p.mask = *kind;
  else {
    p.mask = MaskKind::file;
    p.mask_file = r.resolve(mask);
    if (!fs::exists(p.mask_file))
      fail(path, ": [preprocess] mask '", mask, "' is not \"circle\", \"none\" or an existing image file");
  }
  p.mask_radius_px = r.get<double>(pre, "preprocess", "mask_radius_px").value_or(0.0);
  within(path, "preprocess", "mask_radius_px", p.mask_radius_px, 0, 1e5, "px");
  p.hot_pixel_filter = r.get<bool>(pre, "preprocess", "hot_pixel_filter").value_or(false);
  p.hot_pixel_threshold = r.get<double>(pre, "preprocess", "hot_pixel_threshold").value_or(8.0);
  within(path, "preprocess", "hot_pixel_threshold", p.hot_pixel_threshold, 1e-3, 1e6, "MADs");
  p.neighbour_sigma_steps = r.get<double>(pre, "preprocess", "neighbour_sigma_steps").value_or(0.0);
  within(path, "preprocess", "neighbour_sigma_steps", p.neighbour_sigma_steps, 0, 100, "steps");
  const auto mean_points = r.get<int64_t>(pre, "preprocess", "scan_mean_points");
  if (mean_points && *mean_points < 0)
    fail(path, ": [preprocess] scan_mean_points is ", *mean_points, "; give a count of points (0: every point)");
  if (mean_points) p.scan_mean_points = static_cast<size_t>(*mean_points);
}

/// [fraction]: how the end members are fixed (model, mixture, reference regions or masks).
void read_fraction_table(TomlReader& r, const std::string& path, ScanConfig& c) {
  const toml::table* fr = r.table("fraction", false);
  r.check_keys(fr, "fraction",
               {"end_members", "ordered_regions", "disordered_regions", "ordered_mask", "disordered_mask",
                "refine_pattern_centre"});
  c.end_members.mode = r.get<std::string>(fr, "fraction", "end_members").value_or("model");
  c.refine_pattern_centre = r.get<bool>(fr, "fraction", "refine_pattern_centre").value_or(true);
  if (!enum_from_name<EndMemberMode>(c.end_members.mode))
    fail(path, ": [fraction] end_members = \"", c.end_members.mode, "\" is not ", enum_name_list<EndMemberMode>());
  for (const char* key : {"ordered_regions", "disordered_regions"}) {
    auto& list =
        std::string(key) == "ordered_regions" ? c.end_members.ordered_regions : c.end_members.disordered_regions;
    if (!fr || !fr->get(key)) continue;
    const toml::array* a = fr->get(key)->as_array();
    if (!a) fail(path, ": [fraction] ", key, " must be a list of [row0, col0, row1, col1] rectangles");
    for (const toml::node& n : *a) {
      const toml::array* rect = n.as_array();
      std::array<int, 4> v{};
      if (!rect || rect->size() != 4) fail(path, ": [fraction] ", key, " entries must be [row0, col0, row1, col1]");
      for (int i = 0; i < 4; ++i) {
        const auto x = (*rect)[i].value<int64_t>();
        if (!x) fail(path, ": [fraction] ", key, " entries must be integers");
        v[i] = static_cast<int>(*x);
      }
      if (v[0] < 0 || v[1] < 0 || v[2] < v[0] || v[3] < v[1] || v[2] >= c.grid.rows || v[3] >= c.grid.cols)
        fail(path, ": [fraction] ", key, " rectangle [", v[0], ", ", v[1], ", ", v[2], ", ", v[3],
             "] is not inside the ", c.grid.rows, " x ", c.grid.cols, " grid");
      list.push_back(v);
    }
  }
  for (const char* key : {"ordered_mask", "disordered_mask"}) {
    const auto file = r.get<std::string>(fr, "fraction", key);
    if (!file) continue;
    std::string& target =
        std::string(key) == "ordered_mask" ? c.end_members.ordered_mask : c.end_members.disordered_mask;
    target = r.resolve(*file);
    if (!fs::exists(target)) fail(path, ": [fraction] ", key, " = \"", *file, "\": no such file");
  }
  // The ordered region may be left out: the learned estimator's ordered end member is the scan's
  // particles (the model-led one refuses a disordered region alone when it runs).
  if (c.end_members.mode == "regions" && c.end_members.disordered_regions.empty() &&
      c.end_members.disordered_mask.empty())
    fail(path,
         ": [fraction] end_members = \"regions\" needs disordered_regions or disordered_mask (and, for the "
         "model-led estimator, ordered_regions or ordered_mask)");
}
}  // namespace

ScanConfig parse_scan_config(const std::string& text, const std::string& path) {
  const toml::table root = parse_toml_or_fail(text, path);
  TomlReader r(root, path);
  for (const auto& [k, v] : root) {
    static const std::set<std::string> tables{"scan",         "patterns",   "geometry", "microscope", "phases",
                                              "orientations", "preprocess", "fraction", "output"};
    if (!tables.count(std::string(k.str())))
      fail(path, ": unknown table [", k.str(),
           "] (known: scan, patterns, geometry, microscope, phases, orientations, preprocess, fraction, output)");
  }
  ScanConfig c;
  c.path = fs::absolute(path).lexically_normal().string();
  c.folder = r.folder();
  read_scan_table(r, path, c);
  read_patterns_table(r, path, c);
  read_geometry_table(r, path, c);
  read_microscope_table(r, path, c);
  read_phases_table(r, path, c);
  read_orientations_table(r, path, c);
  read_preprocess_table(r, path, c);
  read_fraction_table(r, path, c);
  const toml::table* out = r.table("output", false);
  r.check_keys(out, "output", {"folder"});
  c.output_folder = r.resolve(r.get<std::string>(out, "output", "folder").value_or("orderband-out"));
  return c;
}

ScanConfig read_scan_config(const std::string& path) {
  return parse_scan_config(read_text_file(path, "scan description"), path);
}

void write_scan_config(std::ostream& os, const ScanConfig& c, const std::string& relative_to,
                       const std::string& header_comment) {
  auto rel = [&](const std::string& p) {
    if (p.empty()) return p;
    const fs::path r = fs::path(p).lexically_relative(fs::absolute(relative_to));
    return r.empty() ? p : r.string();
  };
  auto q = [](const std::string& s) { return toml::value<std::string>(s); };
  os.precision(17);
  if (!header_comment.empty()) {
    std::istringstream lines(header_comment);
    for (std::string line; std::getline(lines, line);) os << "# " << line << "\n";
    os << "\n";
  }
  os << "[scan]\ngrid = \"" << name_of(c.grid.kind) << "\"\nrows = " << c.grid.rows << "\ncols = " << c.grid.cols
     << "\nstep_um = " << c.grid.step_um << "\nbeam_sigma_nm = " << c.beam.sigma_nm << "\n";
  if (c.beam.elongation) os << "beam_elongation = " << *c.beam.elongation << "\n";
  os << "\n";
  os << "[patterns]\nformat = \"" << name_of(c.patterns.format) << "\"\nfile = " << q(rel(c.patterns.path)) << "\n";
  if (c.patterns.format == PatternFormat::raw)
    os << "sample_type = \"" << sample_type_name(c.patterns.sample_type)
       << "\"\nheader_bytes = " << c.patterns.header_bytes << "\n";
  if (c.patterns.trailer_bytes) os << "trailer_bytes = " << c.patterns.trailer_bytes << "\n";
  if (c.patterns.width_px)
    os << "width_px = " << c.patterns.width_px << "\nheight_px = " << c.patterns.height_px << "\n";
  if (!c.patterns.dataset.empty()) os << "dataset = " << q(c.patterns.dataset) << "\n";
  if (!c.patterns.name_pattern.empty()) os << "name_pattern = " << q(c.patterns.name_pattern) << "\n";
  os << "\n[geometry]\npc_px = [" << c.geometry.pc_px.x() << ", " << c.geometry.pc_px.y()
     << "]\ndistance_px = " << c.geometry.distance_px << "\nsample_tilt_deg = " << c.geometry.sample_tilt_deg
     << "\ndetector_tilt_deg = " << c.geometry.detector_tilt_deg << "\nbinning = " << c.geometry.binning << "\n";
  if (c.geometry.screen_pixel_um) os << "screen_pixel_um = " << *c.geometry.screen_pixel_um << "\n";
  os << "\n[microscope]\nkv = " << c.kv << "\n\n[phases]\n";
  if (!c.phases.pair_name.empty())
    os << "pair = " << q(c.phases.pair_name) << "\n";
  else
    os << "ordered = " << q(rel(c.phases.ordered_cif)) << "\ndisordered = " << q(rel(c.phases.disordered_cif)) << "\n";
  os << "\n[orientations]\nsource = \"" << name_of(c.orientations.source) << "\"\n";
  if (!c.orientations.file.empty()) os << "file = " << q(rel(c.orientations.file)) << "\n";
  os << "refine = " << (c.orientations.refine ? "true" : "false") << "\n\n[preprocess]\n";
  const PreprocessSpec& p = c.preprocess;
  os << "static_background = "
     << q(p.static_background == StaticBackgroundKind::file ? rel(p.static_background_file)
                                                            : std::string(name_of(p.static_background)))
     << "\nstatic_background_sigma_px = " << p.static_background_sigma_px
     << "\ndynamic_background_sigma_px = " << p.dynamic_background_sigma_px
     << "\nmask = " << q(p.mask == MaskKind::file ? rel(p.mask_file) : std::string(name_of(p.mask)))
     << "\nmask_radius_px = " << p.mask_radius_px << "\nhot_pixel_filter = " << (p.hot_pixel_filter ? "true" : "false")
     << "\nhot_pixel_threshold = " << p.hot_pixel_threshold << "\nneighbour_sigma_steps = " << p.neighbour_sigma_steps
     << "\nscan_mean_points = " << p.scan_mean_points << "\n\n[fraction]\nend_members = " << q(c.end_members.mode)
     << "\nrefine_pattern_centre = " << (c.refine_pattern_centre ? "true" : "false") << "\n";
  auto rects = [&](const char* key, const std::vector<std::array<int, 4>>& list) {
    if (list.empty()) return;
    os << key << " = [";
    for (size_t i = 0; i < list.size(); ++i)
      os << (i ? ", " : "") << "[" << list[i][0] << ", " << list[i][1] << ", " << list[i][2] << ", " << list[i][3]
         << "]";
    os << "]\n";
  };
  rects("ordered_regions", c.end_members.ordered_regions);
  rects("disordered_regions", c.end_members.disordered_regions);
  if (!c.end_members.ordered_mask.empty()) os << "ordered_mask = " << q(rel(c.end_members.ordered_mask)) << "\n";
  if (!c.end_members.disordered_mask.empty())
    os << "disordered_mask = " << q(rel(c.end_members.disordered_mask)) << "\n";
  os << "\n[output]\nfolder = " << q(rel(c.output_folder)) << "\n";
}

}  // namespace orderband
