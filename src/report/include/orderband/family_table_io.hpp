// Writers for plane-family tables: aligned text, CSV and JSON, on streams.
#pragma once

#include <ostream>
#include <string>
#include <vector>

#include "orderband/dynamical_sphere.hpp"
#include "orderband/family_profile_contrast.hpp"
#include "orderband/ordering_pair.hpp"

namespace orderband {

/// What produced a table: recorded at the top of every output.
struct TableProvenance {
  std::string version;
  std::string command_line;
  double kilovolts = 0;
  double d_min_A = 0;
  double sensitivity_threshold = 0.5;
};

/// The band profiles of a pair's families on both phases' many-beam spheres (one entry per row of
/// the table, same order) and the spheres' parameters: written beside the kinematic columns.
struct DynamicalColumns {
  DynamicalSphereSpec spec;
  ProfileBinning bins;
  std::vector<FamilyProfileContrast> families;
};

void write_pair_families_text(std::ostream& os, const OrderingPair& pair, const std::vector<PairFamily>& rows,
                              const TableProvenance& prov, const DynamicalColumns* dynamical = nullptr);
void write_pair_families_csv(std::ostream& os, const std::vector<PairFamily>& rows, const TableProvenance& prov,
                             const DynamicalColumns* dynamical = nullptr);
void write_pair_families_json(std::ostream& os, const OrderingPair& pair, const std::vector<PairFamily>& rows,
                              const TableProvenance& prov, const DynamicalColumns* dynamical = nullptr);

void write_phase_families_text(std::ostream& os, const Phase& phase, const std::vector<PhaseFamily>& rows,
                               const TableProvenance& prov);
/// One CSV for all phases: a `phase` column tells the rows apart.
void write_phase_families_csv(std::ostream& os, const std::vector<Phase>& phases,
                              const std::vector<std::vector<PhaseFamily>>& tables, const TableProvenance& prov);
void write_phase_families_json(std::ostream& os, const std::vector<Phase>& phases,
                               const std::vector<std::vector<PhaseFamily>>& tables, const TableProvenance& prov);

}  // namespace orderband
