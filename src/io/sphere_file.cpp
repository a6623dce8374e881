// Sphere files: .npy values, JSON side-car, stereographic PNG.
#include "orderband/sphere_file.hpp"

#include <nlohmann/json.hpp>

#include <cstdlib>
#include <filesystem>
#include <sstream>

#include "orderband/atomic_file.hpp"
#include "orderband/error.hpp"
#include "orderband/image_io.hpp"
#include "orderband/input_hash.hpp"
#include "orderband/npy_io.hpp"
#include "orderband/text_file.hpp"

namespace orderband {

namespace {

/// Raised whenever the calculation of a sphere changes, so that cached spheres are recomputed.
constexpr int kSphereFormat = 1;

nlohmann::json spec_json(const DynamicalSphereSpec& spec) {
  return {{"nside", spec.nside},
          {"ordering", "RING"},
          {"kilovolts", spec.kilovolts},
          {"max_g_inv_angstrom", spec.beams.max_g_inv_A},
          {"strong_beam_limit", spec.beams.strong_limit},
          {"weak_beam_limit", spec.beams.weak_limit},
          {"proportional_absorption", spec.absorption.proportional},
          {"mean_backscatter_depth_nm", spec.depth.mean_depth_A / 10}};
}

}  // namespace

std::string default_sphere_cache_folder() {
  if (const char* xdg = std::getenv("XDG_CACHE_HOME"); xdg && *xdg) return std::string(xdg) + "/orderband/spheres";
  if (const char* home = std::getenv("HOME"); home && *home) return std::string(home) + "/.cache/orderband/spheres";
  return "";
}

DynamicalSphere cached_dynamical_sphere(const Phase& phase, const DynamicalSphereSpec& spec,
                                        const std::string& cache_folder, const SphereProvenance& provenance,
                                        const ProgressFn& progress, bool* from_cache) {
  const std::string key = sphere_cache_key(provenance.cif_path, spec);
  const std::string path = cache_folder + "/" + key + ".npy";
  if (!cache_folder.empty() && std::filesystem::exists(path))
    if (auto cached = read_sphere_file(path, key)) {
      if (from_cache) *from_cache = true;
      return std::move(*cached);
    }
  DynamicalSphere sphere = dynamical_sphere(phase, spec, progress);
  if (!cache_folder.empty()) {
    std::error_code ec;
    std::filesystem::create_directories(cache_folder, ec);
    if (ec) fail("cannot create the sphere cache folder '", cache_folder, "': ", ec.message());
    write_sphere_file(path, phase, sphere, spec, provenance);
  }
  if (from_cache) *from_cache = false;
  return sphere;
}

std::string sphere_sidecar_path(const std::string& path, const std::string& extension) {
  std::filesystem::path p(path);
  if (p.extension() == ".npy") return p.replace_extension(extension).string();
  return path + extension;
}

std::string sphere_cache_key(const std::string& cif_path, const DynamicalSphereSpec& spec) {
  std::ostringstream text;
  text << "sphere format " << kSphereFormat << "\ncif " << file_hash_fnv1a64(cif_path) << "\n"
       << spec_json(spec).dump() << "\n";
  return text_hash_fnv1a64(text.str());
}

void write_sphere_file(const std::string& path, const Phase& phase, const DynamicalSphere& sphere,
                       const DynamicalSphereSpec& spec, const SphereProvenance& provenance) {
  const SphereMap& map = sphere.intensity;
  std::vector<float> values(map.sum.size());
  for (size_t p = 0; p < values.size(); ++p) values[p] = static_cast<float>(map.value(static_cast<long>(p)));
  write_npy_float32(path, 1, static_cast<int>(values.size()), values);
  nlohmann::json j;
  j["tool"] = "orderband";
  j["version"] = provenance.version;
  j["command"] = provenance.command;
  j["content"] = "backscattered intensity from many-beam (Bloch-wave) dynamical diffraction";
  j["units"] = "relative to a crystal without diffraction or absorption (1)";
  j["frame"] = "crystal frame: x along a, z along c*; value at the direction the electrons leave along";
  j["phase"] = {
      {"name", phase.name}, {"cif", provenance.cif_path}, {"cif_hash", file_hash_fnv1a64(provenance.cif_path)}};
  j["parameters"] = spec_json(spec);
  j["directions_solved"] = sphere.directions_solved;
  j["mean_strong_beams"] = sphere.mean_strong_beams;
  j["cache_key"] = sphere_cache_key(provenance.cif_path, spec);
  write_text_atomically(sphere_sidecar_path(path, ".json"), j.dump(2) + "\n");
  write_png_rgb(sphere_sidecar_path(path, ".png"), stereographic_image(map, 800),
                {{"Software", "orderband " + provenance.version}, {"Comment", j["parameters"].dump()}});
}

std::optional<DynamicalSphere> read_sphere_file(const std::string& path, const std::string& expected_key) {
  const std::string sidecar = sphere_sidecar_path(path, ".json");
  nlohmann::json j;
  try {
    j = nlohmann::json::parse(read_text_file(sidecar, "sphere side-car"));
  } catch (const nlohmann::json::exception& e) {
    fail(sidecar, ": not a sphere side-car (", e.what(), ")");
  }
  if (!expected_key.empty() && j.value("cache_key", "") != expected_key) return std::nullopt;
  const int nside = j.at("parameters").at("nside").get<int>();
  const NpyArray a = read_npy(path);
  DynamicalSphere sphere{SphereMap(SphereGrid(nside)), j.value("directions_solved", size_t{0}),
                         j.value("mean_strong_beams", 0.0)};
  SphereMap& map = sphere.intensity;
  if (a.values.size() != map.sum.size())
    fail(path, ": ", a.values.size(), " values, a sphere of nside ", nside, " has ", map.sum.size());
  for (size_t p = 0; p < a.values.size(); ++p) map.sum[p] = a.values[p], map.weight[p] = 1;
  return sphere;
}

}  // namespace orderband
