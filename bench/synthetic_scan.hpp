// Benches' shared step: a scenario rendered into a fresh folder and mapped.
#pragma once

#include <filesystem>
#include <fstream>
#include <string>

#include "orderband/map_scan.hpp"
#include "orderband/scan_config.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/synth.hpp"
#include "orderband/synth_scan.hpp"

namespace orderband::bench {

/// Empties `dir`, writes the scenario `toml` there as s.toml, renders it into `dir`/scan and returns
/// the synthetic scan's description.
inline ScanConfig render_scenario(const std::string& dir, const std::string& toml, const char* made_by) {
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  std::ofstream(dir + "/s.toml") << toml;
  write_synthetic_scan(read_synth_scenario(dir + "/s.toml"), dir + "/scan", made_by);
  return read_scan_config(dir + "/scan/scan.toml");
}

/// The whole map of a scan without the mean-sphere pass (the benches measure the statistics).
inline MapResults map_without_mean_spheres(const ScanConfig& config) {
  MapOptions options;
  options.mean_spheres = false;
  return map_scan(read_scan_inputs(config, InputHashing::skip), options);
}

}  // namespace orderband::bench
