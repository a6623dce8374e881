// Reading the pair catalogue (TOML) and locating the shipped crystal data.
#include "orderband/pair_catalog.hpp"

#include <toml++/toml.h>
#include <cstdlib>
#include <filesystem>

#include "orderband/error.hpp"
#include "orderband/phase_cif.hpp"
#include "orderband/scan_config.hpp"

namespace fs = std::filesystem;

namespace orderband {

std::string crystal_data_dir() {
  if (const char* env = std::getenv("ORDERBAND_CRYSTAL_DATA"); env && *env) return env;
#ifdef ORDERBAND_SOURCE_DATA_DIR
  if (fs::exists(fs::path(ORDERBAND_SOURCE_DATA_DIR) / "pairs.toml")) return ORDERBAND_SOURCE_DATA_DIR;
#endif
  std::error_code ec;
  const fs::path exe = fs::read_symlink("/proc/self/exe", ec);
  if (!ec) {
    const fs::path installed = exe.parent_path().parent_path() / "share" / "orderband" / "crystal-data";
    if (fs::exists(installed / "pairs.toml")) return installed.string();
  }
#ifdef ORDERBAND_INSTALL_DATA_DIR
  // A program of its own linked against the installed library.
  if (fs::exists(fs::path(ORDERBAND_INSTALL_DATA_DIR) / "pairs.toml")) return ORDERBAND_INSTALL_DATA_DIR;
#endif
  fail("cannot find the crystal-data folder; set ORDERBAND_CRYSTAL_DATA to its path");
}

std::vector<PairEntry> read_pair_catalog(const std::string& toml_path) {
  toml::table root;
  try {
    root = toml::parse_file(toml_path);
  } catch (const toml::parse_error& e) {
    fail(toml_path, ":", e.source().begin.line, ": ", e.description());
  }
  const fs::path folder = fs::path(toml_path).parent_path();
  std::vector<PairEntry> entries;
  const toml::table* pairs = root["pair"].as_table();
  if (!pairs) fail(toml_path, ": no [pair.NAME] tables");
  for (const auto& [key, node] : *pairs) {
    const toml::table* t = node.as_table();
    if (!t) fail(toml_path, ": pair.", key.str(), " must be a table");
    PairEntry e;
    e.name = std::string(key.str());
    e.description = (*t)["description"].value_or(std::string());
    const auto ordered = (*t)["ordered"].value<std::string>();
    const auto disordered = (*t)["disordered"].value<std::string>();
    if (!ordered || !disordered) fail(toml_path, ": pair.", e.name, " needs both 'ordered' and 'disordered' CIF paths");
    e.ordered_cif = (folder / *ordered).lexically_normal().string();
    e.disordered_cif = (folder / *disordered).lexically_normal().string();
    entries.push_back(std::move(e));
  }
  return entries;
}

OrderingPair load_pair(const std::string& ordered_cif, const std::string& disordered_cif, const std::string& name) {
  OrderingPair pair;
  pair.ordered = load_phase_cif(ordered_cif);
  pair.disordered = load_phase_cif(disordered_cif);
  pair.name = name.empty() ? pair.ordered.name + "/" + pair.disordered.name : name;
  check_pair_compatible(pair);
  return pair;
}

OrderingPair load_phases(const PhaseSelection& s) {
  return s.pair_name.empty() ? load_pair(s.ordered_cif, s.disordered_cif) : load_named_pair(s.pair_name);
}

OrderingPair load_named_pair(const std::string& name) {
  const std::string catalog = (fs::path(crystal_data_dir()) / "pairs.toml").string();
  std::string known;
  for (const PairEntry& e : read_pair_catalog(catalog)) {
    if (e.name == name) return load_pair(e.ordered_cif, e.disordered_cif, e.name);
    known += (known.empty() ? "" : ", ") + e.name;
  }
  fail("unknown phase pair '", name, "' (known in ", catalog, ": ", known, ")");
}

}  // namespace orderband
