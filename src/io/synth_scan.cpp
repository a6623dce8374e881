// Scenario files and writing a complete synthetic scan.
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "orderband/atomic_file.hpp"
#include "orderband/error.hpp"
#include "orderband/npy_io.hpp"
#include "orderband/orientation_csv.hpp"
#include "orderband/pair_catalog.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/synth_scan.hpp"

#include "orderband/sphere_file.hpp"
#include "orderband/units.hpp"
#include "orderband/version.hpp"
#include "toml_reader.hpp"

namespace fs = std::filesystem;

namespace orderband {
namespace {

SizeDistribution read_size(TomlReader& r, const toml::table* t, const std::string& name) {
  const std::string kind = r.get<std::string>(t, name, "distribution").value_or("lognormal");
  auto positive = [&](const char* key) {
    const double v = r.require<double>(t, name, key);
    if (!(v > 0)) fail(r.path(), ": [", name, "] ", key, " must be a positive size in µm, got ", v);
    return v;
  };
  if (kind == "lognormal") {
    const double sigma = r.get<double>(t, name, "sigma_ln").value_or(0.2);
    if (!(sigma >= 0 && sigma <= 2)) fail(r.path(), ": [", name, "] sigma_ln must be within [0, 2], got ", sigma);
    return SizeDistribution::lognormal(positive("median_diameter_um"), sigma);
  }
  if (kind == "lsw") return SizeDistribution::lsw(positive("mean_diameter_um"));
  if (kind == "fixed") return SizeDistribution::fixed(positive("diameter_um"));
  fail(r.path(), ": [", name, "] distribution = \"", kind, "\" is not \"lognormal\", \"lsw\" or \"fixed\"");
}

void read_class(TomlReader& r, const toml::table* t, const std::string& name, PrecipitateClassSpec& c) {
  r.check_keys(t, name,
               {"area_fraction", "distribution", "median_diameter_um", "sigma_ln", "mean_diameter_um", "diameter_um",
                "shape", "own_orientation"});
  if (!t) return;
  c.area_fraction = r.get<double>(t, name, "area_fraction").value_or(0.0);
  if (!(c.area_fraction >= 0 && c.area_fraction < 1))
    fail(r.path(), ": [", name, "] area_fraction must be within [0, 1), got ", c.area_fraction);
  if (c.area_fraction == 0) return;
  c.size = read_size(r, t, name);
  const std::string shape = r.get<std::string>(t, name, "shape").value_or("sphere");
  if (shape == "sphere")
    c.shape = ParticleShape::sphere;
  else if (shape == "cuboid")
    c.shape = ParticleShape::cuboid;
  else
    fail(r.path(), ": [", name, "] shape = \"", shape, "\" is not \"sphere\" or \"cuboid\"");
  c.own_orientation = r.get<bool>(t, name, "own_orientation").value_or(false);
}

// Names in the order of the enums (BandShape, BackgroundShape).
const std::vector<std::string> kBandShapeNames{"soft", "flat", "gaussian"};
const std::vector<std::string> kBackgroundNames{"quadratic", "gaussian", "linear"};

/// [renderer]: the model-mismatch variants (synth.hpp), never told to the estimator.
void read_renderer_variant(TomlReader& r, const toml::table* t, BandModelParams& band, RendererVariant& v) {
  r.check_keys(t, "renderer",
               {"band_shape", "edge_asymmetry", "family_contrast_spread", "family_contrast_seed",
                "ordered_fundamental_ratio", "ordered_fundamental_edge_contrast", "detector_gamma", "background_shape",
                "lattice_misfit", "beam_elongation", "pc_error_px"});
  const std::string path = r.path();
  band.shape = static_cast<BandShape>(r.choice(t, "renderer", "band_shape", kBandShapeNames, 0));
  band.edge_asymmetry = r.get<double>(t, "renderer", "edge_asymmetry").value_or(0.0);
  if (!(std::abs(band.edge_asymmetry) <= 1)) fail(path, ": [renderer] edge_asymmetry must be within [-1, 1]");
  v.family_contrast_spread = r.get<double>(t, "renderer", "family_contrast_spread").value_or(0.0);
  if (!(v.family_contrast_spread >= 0 && v.family_contrast_spread < 1))
    fail(path, ": [renderer] family_contrast_spread must be within [0, 1)");
  const int64_t seed = r.get<int64_t>(t, "renderer", "family_contrast_seed").value_or(1);
  if (seed < 0) fail(path, ": [renderer] family_contrast_seed must be >= 0");
  v.family_contrast_seed = static_cast<std::uint64_t>(seed);
  v.ordered_fundamental_ratio = r.get<double>(t, "renderer", "ordered_fundamental_ratio").value_or(1.0);
  if (!(v.ordered_fundamental_ratio > 0 && v.ordered_fundamental_ratio <= 3))
    fail(path, ": [renderer] ordered_fundamental_ratio must be within (0, 3]");
  v.ordered_fundamental_edge_contrast =
      r.get<double>(t, "renderer", "ordered_fundamental_edge_contrast").value_or(std::nan(""));
  if (!std::isnan(v.ordered_fundamental_edge_contrast) && !(std::abs(v.ordered_fundamental_edge_contrast) <= 1))
    fail(path, ": [renderer] ordered_fundamental_edge_contrast must be within [-1, 1]");
  v.detector_gamma = r.get<double>(t, "renderer", "detector_gamma").value_or(1.0);
  if (!(v.detector_gamma >= 0.5 && v.detector_gamma <= 2))
    fail(path, ": [renderer] detector_gamma must be within [0.5, 2]");
  v.background = static_cast<BackgroundShape>(r.choice(t, "renderer", "background_shape", kBackgroundNames, 0));
  v.lattice_misfit = r.get<double>(t, "renderer", "lattice_misfit").value_or(0.0);
  if (!(std::abs(v.lattice_misfit) <= 0.02)) fail(path, ": [renderer] lattice_misfit must be within [-0.02, 0.02]");
  v.beam_elongation = r.get<double>(t, "renderer", "beam_elongation").value_or(1.0);
  if (!(v.beam_elongation >= 1 && v.beam_elongation <= 10))
    fail(path, ": [renderer] beam_elongation must be within [1, 10]");
  if (const toml::node* e = t ? t->get("pc_error_px") : nullptr) {
    const toml::array* a = e->as_array();
    if (!a || a->size() != 3 || !(*a)[0].value<double>() || !(*a)[1].value<double>() || !(*a)[2].value<double>())
      fail(path, ": [renderer] pc_error_px must be [x, y, distance] in pixels");
    v.pc_error_px = {*(*a)[0].value<double>(), *(*a)[1].value<double>(), *(*a)[2].value<double>()};
  }
  if (!(v.pc_error_px.cwiseAbs().maxCoeff() <= 10))
    fail(path, ": [renderer] pc_error_px components must be within 10 px");
}

/// [scenario] and [scan]: name, seed, the grid.
void read_scenario_and_grid(TomlReader& r, const std::string& path, SynthScenario& s) {
  const toml::table* sc = r.table("scenario", false);
  r.check_keys(sc, "scenario", {"name", "description", "seed"});
  s.name = r.get<std::string>(sc, "scenario", "name").value_or(fs::path(path).stem().string());
  s.description = r.get<std::string>(sc, "scenario", "description").value_or("");
  const int64_t seed = r.get<int64_t>(sc, "scenario", "seed").value_or(1);
  if (seed < 0) fail(path, ": [scenario] seed must be >= 0");
  s.seed = static_cast<std::uint64_t>(seed);

  const toml::table* scan = r.table("scan", true);
  r.check_keys(scan, "scan", {"grid", "rows", "cols", "step_um"});
  const std::string grid = r.get<std::string>(scan, "scan", "grid").value_or("square");
  if (grid != "square" && grid != "hexagonal")
    fail(path, ": [scan] grid = \"", grid, "\" is not \"square\" or \"hexagonal\"");
  s.grid.kind = grid == "square" ? GridKind::square : GridKind::hexagonal;
  s.grid.rows = static_cast<int>(r.require<int64_t>(scan, "scan", "rows"));
  s.grid.cols = static_cast<int>(r.require<int64_t>(scan, "scan", "cols"));
  s.grid.step_um = r.require<double>(scan, "scan", "step_um");
  if (s.grid.rows <= 0 || s.grid.cols <= 0) fail(path, ": [scan] rows and cols must be positive");
  if (!(s.grid.step_um > 0)) fail(path, ": [scan] step_um must be a positive step in µm, got ", s.grid.step_um);
}

/// [detector]: the geometry the patterns are rendered with.
void read_detector(TomlReader& r, const std::string& path, SynthScenario& s) {
  const toml::table* det = r.table("detector", true);
  r.check_keys(det, "detector",
               {"width_px", "height_px", "pc_px", "distance_px", "sample_tilt_deg", "detector_tilt_deg", "binning",
                "screen_pixel_um", "pc_drift"});
  s.geometry.width_px = static_cast<int>(r.require<int64_t>(det, "detector", "width_px"));
  s.geometry.height_px = static_cast<int>(r.require<int64_t>(det, "detector", "height_px"));
  const toml::array* pc = det->get("pc_px") ? det->get("pc_px")->as_array() : nullptr;
  if (!pc || pc->size() != 2 || !(*pc)[0].value<double>() || !(*pc)[1].value<double>())
    fail(path, ": [detector] pc_px must be [x, y] in pixels from the top-left corner");
  s.geometry.pc_px = {*(*pc)[0].value<double>(), *(*pc)[1].value<double>()};
  s.geometry.distance_px = r.require<double>(det, "detector", "distance_px");
  s.geometry.sample_tilt_deg = r.get<double>(det, "detector", "sample_tilt_deg").value_or(70.0);
  s.geometry.detector_tilt_deg = r.get<double>(det, "detector", "detector_tilt_deg").value_or(0.0);
  s.geometry.binning = static_cast<int>(r.get<int64_t>(det, "detector", "binning").value_or(1));
  if (auto px = r.get<double>(det, "detector", "screen_pixel_um")) s.geometry.screen_pixel_um = *px;
  s.pc_drift = r.get<bool>(det, "detector", "pc_drift").value_or(false);
  if (s.pc_drift && !s.geometry.screen_pixel_um)
    fail(path, ": [detector] pc_drift = true needs screen_pixel_um (the unbinned screen pixel size in µm)");
  DetectorGeometry check(s.geometry);  // validates ranges
}

/// [microscope] and [phases]: the voltage and the phase pair.
void read_voltage_and_phases(TomlReader& r, const std::string& path, SynthScenario& s) {
  const toml::table* mic = r.table("microscope", false);
  r.check_keys(mic, "microscope", {"kv"});
  s.kv = r.get<double>(mic, "microscope", "kv").value_or(20.0);
  if (!(s.kv > 0)) fail(path, ": [microscope] kv must be a positive voltage in kV, got ", s.kv);

  const toml::table* ph = r.table("phases", false);
  r.check_keys(ph, "phases", {"pair", "ordered", "disordered"});
  s.phases.pair_name = r.get<std::string>(ph, "phases", "pair").value_or("");
  const auto ord = r.get<std::string>(ph, "phases", "ordered"), dis = r.get<std::string>(ph, "phases", "disordered");
  if (ord || dis) {
    if (!ord || !dis) fail(path, ": [phases] 'ordered' and 'disordered' go together (two CIF files)");
    s.phases.ordered_cif = r.resolve(*ord);
    s.phases.disordered_cif = r.resolve(*dis);
    for (const auto& f : {s.phases.ordered_cif, s.phases.disordered_cif})
      if (!fs::exists(f)) fail(path, ": [phases] CIF file '", f, "' does not exist");
  } else if (s.phases.pair_name.empty()) {
    s.phases.pair_name = "ni";
  }
}

/// [patterns] model and the many-beam renderer's keys (ManyBeamSpec).
void read_many_beam(TomlReader& r, const toml::table* pat, const std::string& path, SynthScenario& s) {
  const std::string model = r.get<std::string>(pat, "patterns", "model").value_or("kinematic");
  if (model == "many-beam")
    s.pattern_model = PatternModelKind::many_beam;
  else if (model != "kinematic")
    fail(path, ": [patterns] model = \"", model, "\" is not \"kinematic\" or \"many-beam\"");
  ManyBeamSpec& m = s.many_beam;
  auto number = [&](const char* key, double& into, double lo, double hi) {
    into = r.get<double>(pat, "patterns", key).value_or(into);
    if (!(into > lo && into <= hi))
      fail(path, ": [patterns] ", key, " must be within (", lo, ", ", hi, "], got ", into);
  };
  number("many_beam_contrast", m.contrast, 0, 1);
  number("sphere_max_g", m.beams.max_g_inv_A, 0, 4);
  number("sphere_strong_limit", m.beams.strong_limit, 0, 10000);
  number("sphere_weak_limit", m.beams.weak_limit, m.beams.strong_limit - 1e-9, 100000);
  number("sphere_mean_depth_nm", m.mean_depth_nm, 0, 1000);
  m.proportional_absorption = r.get<double>(pat, "patterns", "sphere_absorption").value_or(m.proportional_absorption);
  if (!(m.proportional_absorption >= 0 && m.proportional_absorption < 1))
    fail(path, ": [patterns] sphere_absorption must be within [0, 1), got ", m.proportional_absorption);
  m.nside = static_cast<int>(r.get<int64_t>(pat, "patterns", "sphere_nside").value_or(m.nside));
  if (m.nside < 4 || m.nside > 1024 || (m.nside & (m.nside - 1)))
    fail(path, ": [patterns] sphere_nside must be a power of two from 4 to 1024, got ", m.nside);
  m.cache_folder = r.get<std::string>(pat, "patterns", "sphere_cache").value_or(default_sphere_cache_folder());
}

/// [patterns]: counts, sample type and the band model's parameters.
void read_pattern_model(TomlReader& r, const std::string& path, SynthScenario& s) {
  const toml::table* pat = r.table("patterns", false);
  r.check_keys(
      pat, "patterns",
      {"sample_type", "counts_per_px", "band_amplitude", "band_exponent", "edge_contrast", "edge_width", "d_min_A",
       "beam_sigma_nm", "background_falloff", "model", "many_beam_contrast", "sphere_nside", "sphere_max_g",
       "sphere_strong_limit", "sphere_weak_limit", "sphere_absorption", "sphere_mean_depth_nm", "sphere_cache"});
  const std::string type = r.get<std::string>(pat, "patterns", "sample_type").value_or("uint16");
  if (type == "uint8")
    s.sample_type = SampleType::uint8;
  else if (type == "uint16")
    s.sample_type = SampleType::uint16;
  else
    fail(path, ": [patterns] sample_type = \"", type, "\" is not \"uint8\" or \"uint16\"");
  s.counts_per_px = r.get<double>(pat, "patterns", "counts_per_px").value_or(5000.0);
  if (!(s.counts_per_px > 0 && s.counts_per_px < 60000))
    fail(path, ": [patterns] counts_per_px must be within (0, 60000), got ", s.counts_per_px);
  s.band.band_amplitude = r.get<double>(pat, "patterns", "band_amplitude").value_or(s.band.band_amplitude);
  s.band.band_exponent = r.get<double>(pat, "patterns", "band_exponent").value_or(s.band.band_exponent);
  s.band.edge_contrast = r.get<double>(pat, "patterns", "edge_contrast").value_or(s.band.edge_contrast);
  s.band.edge_width = r.get<double>(pat, "patterns", "edge_width").value_or(s.band.edge_width);
  s.band.d_min_A = r.get<double>(pat, "patterns", "d_min_A").value_or(s.band.d_min_A);
  if (!(s.band.band_amplitude >= 0 && s.band.band_amplitude <= 1))
    fail(path, ": [patterns] band_amplitude must be within [0, 1], got ", s.band.band_amplitude);
  if (!(s.band.band_exponent > 0)) fail(path, ": [patterns] band_exponent must be positive");
  if (!(s.band.edge_width > 0)) fail(path, ": [patterns] edge_width must be positive");
  if (!(s.band.d_min_A > 0)) fail(path, ": [patterns] d_min_A must be positive");
  s.beam_sigma_nm = r.get<double>(pat, "patterns", "beam_sigma_nm").value_or(10.0);
  if (!(s.beam_sigma_nm >= 0)) fail(path, ": [patterns] beam_sigma_nm must be >= 0, got ", s.beam_sigma_nm);
  s.background_falloff = r.get<double>(pat, "patterns", "background_falloff").value_or(0.5);
  if (!(s.background_falloff >= 0 && s.background_falloff < 1))
    fail(path, ": [patterns] background_falloff must be within [0, 1)");
  read_many_beam(r, pat, path, s);
}

/// [grains], [primary], [secondary], [tertiary]: the microstructure.
void read_microstructure(TomlReader& r, const std::string& path, SynthScenario& s) {
  MicrostructureSpec& m = s.micro;
  m.width_um = s.grid.field_width_um();
  m.height_um = s.grid.field_height_um();
  m.seed = s.seed;
  const toml::table* gr = r.table("grains", false);
  r.check_keys(gr, "grains", {"count", "texture", "texture_spread_deg"});
  // A grain smaller than one scan point is not a grain of the map: at most one per point.
  const int64_t grains = r.get<int64_t>(gr, "grains", "count").value_or(1);
  if (grains < 1 || grains > static_cast<int64_t>(s.grid.count()))
    fail(path, ": [grains] count must be within [1, ", s.grid.count(), "] (one grain per scan point at most), got ",
         grains);
  m.grain_count = static_cast<int>(grains);
  const std::string tex = r.get<std::string>(gr, "grains", "texture").value_or("random");
  if (tex == "random")
    m.texture = Texture::random;
  else if (tex == "cube")
    m.texture = Texture::cube;
  else
    fail(path, ": [grains] texture = \"", tex, "\" is not \"random\" or \"cube\"");
  m.texture_spread_deg = r.get<double>(gr, "grains", "texture_spread_deg").value_or(10.0);
  read_class(r, r.table("primary", false), "primary", m.primary);
  read_class(r, r.table("secondary", false), "secondary", m.secondary);
  if (m.primary.area_fraction > 0 && m.grain_count < 2)
    fail(path, ": [primary] particles sit on grain boundaries: [grains] count must be at least 2");
  if (m.primary.area_fraction + m.secondary.area_fraction >= 0.9)
    fail(path, ": primary + secondary area fractions must stay below 0.9");
  const toml::table* ter = r.table("tertiary", false);
  r.check_keys(ter, "tertiary", {"fraction"});
  m.tertiary_fraction = r.get<double>(ter, "tertiary", "fraction").value_or(0.0);
  if (!(m.tertiary_fraction >= 0 && m.tertiary_fraction <= 1))
    fail(path, ": [tertiary] fraction must be within [0, 1], got ", m.tertiary_fraction);
  const toml::table* layer = r.table("free_layer", false);
  r.check_keys(layer, "free_layer", {"depth_um"});
  m.free_layer_um = r.get<double>(layer, "free_layer", "depth_um").value_or(0.0);
  if (!(m.free_layer_um >= 0 && m.free_layer_um < m.height_um))
    fail(path, ": [free_layer] depth_um must be within [0, the field's height ", m.height_um, " µm), got ",
         m.free_layer_um);
}
}  // namespace

SynthScenario parse_synth_scenario(const std::string& text, const std::string& path) {
  const toml::table root = parse_toml_or_fail(text, path);
  TomlReader r(root, path);
  static const std::set<std::string> tables{"scenario",   "scan",     "detector", "microscope", "phases",
                                            "patterns",   "grains",   "primary",  "secondary",  "tertiary",
                                            "free_layer", "renderer", "output"};
  for (const auto& [k, v] : root)
    if (!tables.count(std::string(k.str())))
      fail(path, ": unknown table [", k.str(),
           "] (known: scenario, scan, detector, microscope, phases, patterns, grains, primary, secondary, tertiary, "
           "free_layer, renderer, output)");
  SynthScenario s;
  s.path = fs::absolute(path).lexically_normal().string();
  read_scenario_and_grid(r, path, s);
  read_detector(r, path, s);
  read_voltage_and_phases(r, path, s);
  read_pattern_model(r, path, s);
  read_renderer_variant(r, r.table("renderer", false), s.band, s.variant);
  read_microstructure(r, path, s);
  const toml::table* out = r.table("output", false);
  r.check_keys(out, "output", {"orientations"});
  const std::string ori = r.get<std::string>(out, "output", "orientations").value_or("find");
  if (ori != "find" && ori != "truth")
    fail(path, ": [output] orientations = \"", ori, "\" is not \"find\" or \"truth\"");
  s.scan_uses_truth_orientations = ori == "truth";
  return s;
}

SynthScenario read_synth_scenario(const std::string& path) {
  return parse_synth_scenario(read_text_file(path, "scenario"), path);
}

namespace {

/// The renderer variant as recorded in truth.json.
nlohmann::json variant_json(const SynthScenario& s) {
  const RendererVariant& v = s.variant;
  nlohmann::json j = {{"band_shape", kBandShapeNames[static_cast<size_t>(s.band.shape)]},
                      {"edge_asymmetry", s.band.edge_asymmetry},
                      {"family_contrast_spread", v.family_contrast_spread},
                      {"family_contrast_seed", v.family_contrast_seed},
                      {"ordered_fundamental_ratio", v.ordered_fundamental_ratio},
                      {"detector_gamma", v.detector_gamma},
                      {"background_shape", kBackgroundNames[static_cast<size_t>(v.background)]},
                      {"lattice_misfit", v.lattice_misfit},
                      {"beam_elongation", v.beam_elongation},
                      {"pc_error_px", {v.pc_error_px.x(), v.pc_error_px.y(), v.pc_error_px.z()}}};
  j["ordered_fundamental_edge_contrast"] = std::isnan(v.ordered_fundamental_edge_contrast)
                                               ? nlohmann::json(s.band.edge_contrast)
                                               : nlohmann::json(v.ordered_fundamental_edge_contrast);
  return j;
}

/// patterns.raw: the scan's patterns, rendered row by row and written as they come.
std::string write_patterns(const SynthScenario& s, const SyntheticScan& scan_render, const std::string& dir,
                           const SynthProgress& progress) {
  const size_t px = scan_render.pixels();
  const std::string patterns_path = dir + "/patterns.raw";
  write_atomically(patterns_path, [&](const std::string& temp) {
    std::ofstream out(temp, std::ios::binary);
    if (!out) fail("cannot create '", temp, "'");
    std::vector<std::uint16_t> row(static_cast<size_t>(s.grid.cols) * px);
    std::vector<std::uint8_t> row8;
    for (int r = 0; r < s.grid.rows; ++r) {
      scan_render.render_row(r, row.data());
      if (s.sample_type == SampleType::uint8) {
        row8.assign(row.begin(), row.end());
        out.write(reinterpret_cast<const char*>(row8.data()), static_cast<std::streamsize>(row8.size()));
      } else {
        out.write(reinterpret_cast<const char*>(row.data()), static_cast<std::streamsize>(row.size() * 2));
      }
      if (progress) progress(static_cast<size_t>(r + 1) * s.grid.cols, s.grid.count());
    }
    finish_writing(out, patterns_path);
  });
  return patterns_path;
}

/// truth_orientations.csv: every point's lattice orientation and the phase at its centre.
void write_truth_orientations(const SynthScenario& s, const SynthTruth& truth, const OrderingPair& pair,
                              const std::string& dir, const std::string& provenance) {
  OrientationTable t;
  for (size_t k = 0; k < s.grid.count(); ++k) {
    t.orientations.emplace_back(truth.orientation[k]);
    t.phases.push_back(truth.ordered_at_centre[k] ? pair.ordered.name : pair.disordered.name);
  }
  std::ostringstream os;
  write_orientation_csv(os, s.grid, t, provenance);
  write_text_atomically(dir + "/truth_orientations.csv", os.str());
}

/// truth_particles.csv: every particle of the microstructure with its section in the field.
void write_truth_particles(const SynthScenario& s, const Microstructure& micro, const std::string& dir,
                           const std::string& provenance) {
  std::ostringstream os;
  os << "# " << provenance << "\n"
     << "id,class,shape,x_um,y_um,z_um,diameter_3d_um,section_ecd_um,host_grain,own_orientation,phi1_deg,Phi_deg,"
        "phi2_deg,in_field\n";
  const double dx = s.grid.step_um, dy = s.grid.row_spacing_um();
  char buf[400];
  for (const Particle& q : micro.particles()) {
    const Eigen::Vector3d e = q.orientation.bunge();
    const bool in_field = q.centre_um.x() >= -0.5 * dx && q.centre_um.x() < s.grid.field_width_um() - 0.5 * dx &&
                          q.centre_um.y() >= -0.5 * dy && q.centre_um.y() < s.grid.field_height_um() - 0.5 * dy;
    std::snprintf(buf, sizeof buf, "%d,%s,%s,%.6f,%.6f,%.6f,%.6f,%.6f,%d,%d,%.6f,%.6f,%.6f,%d\n", q.id,
                  particle_class_name(q.cls), q.shape == ParticleShape::sphere ? "sphere" : "cuboid", q.centre_um.x(),
                  q.centre_um.y(), q.centre_um.z(), q.diameter_um, q.section_ecd_um(), q.host_grain,
                  q.own_orientation ? 1 : 0, rad_to_deg(e[0]), rad_to_deg(e[1]), rad_to_deg(e[2]), in_field ? 1 : 0);
    os << buf;
  }
  write_text_atomically(dir + "/truth_particles.csv", os.str());
}

/// scan.toml: the scan description a user's scan would have.
void write_scan_description(const SynthScenario& s, const DetectorGeometry& geometry, const std::string& dir,
                            const std::string& patterns_path, const std::string& provenance) {
  ScanConfig scan;
  scan.grid = s.grid;
  scan.patterns.format = PatternFormat::raw;
  scan.patterns.path = patterns_path;
  scan.patterns.sample_type = s.sample_type;
  scan.patterns.width_px = geometry.width();
  scan.patterns.height_px = geometry.height();
  scan.geometry = s.geometry;
  if (!s.pc_drift) scan.geometry.screen_pixel_um.reset();
  scan.kv = s.kv;
  scan.phases = s.phases;
  scan.beam.sigma_nm = s.beam_sigma_nm;  // the footprint the patterns were rendered with
  scan.beam.elongation = s.variant.beam_elongation;
  if (s.scan_uses_truth_orientations) {
    scan.orientations.source = OrientationSourceKind::file;
    scan.orientations.file = dir + "/truth_orientations.csv";
  }
  scan.output_folder = dir + "/orderband-out";
  {
    std::ostringstream os;
    write_scan_config(os, scan, dir,
                      "synthetic scan '" + s.name + "' made by " + provenance +
                          (s.pattern_model == PatternModelKind::many_beam
                               ? "\nmany-beam (Bloch-wave) spheres of both phases; truth in truth.json"
                               : "\nkinematic band model, not a dynamical simulation; truth in truth.json"));
    write_text_atomically(dir + "/scan.toml", os.str());
  }
}

DynamicalSphereSpec sphere_spec(const SynthScenario& s) {
  DynamicalSphereSpec spec;
  spec.nside = s.many_beam.nside;
  spec.kilovolts = s.kv;
  spec.beams = s.many_beam.beams;
  spec.absorption.proportional = s.many_beam.proportional_absorption;
  spec.depth.mean_depth_A = 10 * s.many_beam.mean_depth_nm;
  return spec;
}

nlohmann::json many_beam_json(const SynthScenario& s, const OrderingPair& pair) {
  if (s.pattern_model != PatternModelKind::many_beam) return nullptr;
  const DynamicalSphereSpec spec = sphere_spec(s);
  const ManyBeamSpec& m = s.many_beam;
  return {{"contrast", m.contrast},
          {"sphere_nside", m.nside},
          {"sphere_max_g_inv_angstrom", m.beams.max_g_inv_A},
          {"sphere_strong_limit", m.beams.strong_limit},
          {"sphere_weak_limit", m.beams.weak_limit},
          {"sphere_absorption", m.proportional_absorption},
          {"sphere_mean_depth_nm", m.mean_depth_nm},
          {"ordered_sphere_key", sphere_cache_key(pair.ordered.source, spec)},
          {"disordered_sphere_key", sphere_cache_key(pair.disordered.source, spec)}};
}

/// truth.json: the scenario, the renderer variant and the true fractions and classes.
void write_truth_json(const SynthScenario& s, const SynthTruth& truth, const OrderingPair& pair,
                      const DetectorGeometry& geometry, const std::string& dir, const std::string& command_line) {
  nlohmann::json j;
  j["tool"] = "orderband";
  j["version"] = kVersion;
  j["command_line"] = command_line;
  j["scenario"] = {
      {"name", s.name},
      {"description", s.description},
      {"file", s.path},
      {"seed", s.seed},
      {"rows", s.grid.rows},
      {"cols", s.grid.cols},
      {"step_um", s.grid.step_um},
      {"grid", s.grid.kind == GridKind::hexagonal ? "hexagonal" : "square"},
      {"pattern_width_px", geometry.width()},
      {"pattern_height_px", geometry.height()},
      {"counts_per_px", s.counts_per_px},
      {"sample_type", sample_type_name(s.sample_type)},
      {"band_amplitude", s.band.band_amplitude},
      {"band_exponent", s.band.band_exponent},
      {"edge_contrast", s.band.edge_contrast},
      {"edge_width_theta_b", s.band.edge_width},
      {"d_min_A", s.band.d_min_A},
      {"beam_sigma_nm", s.beam_sigma_nm},
      {"background_falloff", s.background_falloff},
      {"renderer_variant", variant_json(s)},
      {"pattern_model", s.pattern_model == PatternModelKind::many_beam ? "many-beam" : "kinematic"},
      {"many_beam", many_beam_json(s, pair)},
      {"kv", s.kv},
      {"pair", pair.name},
      {"grain_count", s.micro.grain_count},
      {"primary_target_area_fraction", s.micro.primary.area_fraction},
      {"secondary_target_area_fraction", s.micro.secondary.area_fraction},
      {"tertiary_fraction", s.micro.tertiary_fraction},
      {"free_layer_um", s.micro.free_layer_um},
      {"secondary_mean_diameter_3d_um", s.micro.secondary.area_fraction > 0 ? s.micro.secondary.size.mean_um() : 0.0}};
  j["ordered_area_fraction"] = truth.ordered_area_fraction;
  j["classes"] = {{"primary",
                   {{"area_fraction", truth.primary_area_fraction},
                    {"count", truth.primary_count},
                    {"mean_ecd_um", truth.primary_mean_ecd_um}}},
                  {"secondary",
                   {{"area_fraction", truth.secondary_area_fraction},
                    {"count", truth.secondary_count},
                    {"mean_ecd_um", truth.secondary_mean_ecd_um}}},
                  {"tertiary", {{"area_fraction", truth.tertiary_area_fraction}}}};
  j["subresolution_ordered_fraction"] = s.micro.tertiary_fraction;
  j["particle_count"] = truth.primary_count + truth.secondary_count;
  j["files"] = {{"patterns", "patterns.raw"},
                {"scan", "scan.toml"},
                {"fraction_map", "truth_fraction.npy"},
                {"grain_map", "truth_grains.npy"},
                {"orientations", "truth_orientations.csv"},
                {"particles", "truth_particles.csv"}};
  write_text_atomically(dir + "/truth.json", j.dump(2) + "\n");
}
}  // namespace

ManyBeamSpheres many_beam_spheres(const SynthScenario& s, const OrderingPair& pair, const std::string& command_line,
                                  const SphereProgress& progress) {
  ManyBeamSpheres out;
  if (s.pattern_model != PatternModelKind::many_beam) return out;
  const DynamicalSphereSpec spec = sphere_spec(s);
  auto one = [&](const Phase& phase) {
    ProgressFn report;
    if (progress) report = [&](size_t d, size_t t) { progress(phase.name, d, t); };
    return cached_dynamical_sphere(phase, spec, s.many_beam.cache_folder, {kVersion, command_line, phase.source},
                                   report);
  };
  out.ordered.emplace(one(pair.ordered));
  out.disordered.emplace(one(pair.disordered));
  return out;
}

void write_synthetic_scan(const SynthScenario& s, const std::string& folder, const std::string& command_line,
                          const SynthProgress& progress, const SphereProgress& sphere_progress) {
  std::error_code ec;
  fs::create_directories(folder, ec);
  if (ec) fail("cannot create output folder '", folder, "': ", ec.message());
  const std::string dir = fs::absolute(folder).lexically_normal().string();

  const OrderingPair pair = load_phases(s.phases);
  const ManyBeamSpheres spheres = many_beam_spheres(s, pair, command_line, sphere_progress);
  const SyntheticScan scan_render(s, pair, spheres.maps());
  const DetectorGeometry& geometry = scan_render.geometry();
  const Microstructure& micro = scan_render.microstructure();

  const std::string patterns_path = write_patterns(s, scan_render, dir, progress);
  const SynthTruth truth = scan_render.truth();
  write_npy_float32(dir + "/truth_fraction.npy", s.grid.rows, s.grid.cols, truth.ordered_fraction);
  write_npy_int32(dir + "/truth_grains.npy", s.grid.rows, s.grid.cols, truth.grain);
  const std::string provenance = std::string("orderband ") + kVersion + ": " + command_line;
  write_truth_orientations(s, truth, pair, dir, provenance);
  write_truth_particles(s, micro, dir, provenance);
  write_scan_description(s, geometry, dir, patterns_path, provenance);
  write_truth_json(s, truth, pair, geometry, dir, command_line);
}

}  // namespace orderband
