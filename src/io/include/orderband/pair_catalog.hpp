// Named ordered/disordered phase pairs shipped in crystal-data/pairs.toml.
#pragma once

#include <string>
#include <vector>

#include "orderband/ordering_pair.hpp"

namespace orderband {

struct PairEntry {
  std::string name;
  std::string description;
  std::string ordered_cif;     ///< absolute path
  std::string disordered_cif;  ///< absolute path
};

/// The folder of shipped crystal data: $ORDERBAND_CRYSTAL_DATA if set, else
/// the source tree's crystal-data (development builds), else
/// <prefix>/share/orderband/crystal-data next to an installed program.
std::string crystal_data_dir();

/// Reads a pair catalogue (TOML, tables [pair.NAME] with keys description,
/// ordered, disordered; paths relative to the catalogue's folder).
std::vector<PairEntry> read_pair_catalog(const std::string& toml_path);

/// Loads the named pair from crystal_data_dir()/pairs.toml. Throws
/// orderband::Error listing the known names if `name` is not among them.
OrderingPair load_named_pair(const std::string& name);

struct PhaseSelection;
/// The pair a scan description or scenario selects: a named pair or two CIF files.
OrderingPair load_phases(const PhaseSelection& selection);

/// Loads a pair from two CIF files and checks that they share a cell setting.
OrderingPair load_pair(const std::string& ordered_cif, const std::string& disordered_cif, const std::string& name = "");

}  // namespace orderband
