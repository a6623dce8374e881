// A synthetic scan's truth beside what map measured: the same quantities, counted the same way.
#pragma once

#include <string>
#include <vector>

#include "orderband/scan_grid.hpp"

namespace orderband {

/// One particle of a synthetic scan's truth (truth_particles.csv), cut by the scan plane.
struct TruthSection {
  std::string size_class;  ///< "primary", "secondary" (tertiary is sub-resolution: no particles)
  double x_um = 0, y_um = 0;
  double diameter_3d_um = 0, section_ecd_um = 0;
};

/// Reads truth_particles.csv as synth writes it; particles the plane does not cut (section 0) are left out.
std::vector<TruthSection> read_truth_sections(const std::string& path);

/// Per class, the truth's sections whose centre lies in the field and that do not reach the map
/// border (the guard frame map uses), all of them and those at or above the detection limit.
struct TruthClassCount {
  std::string name;
  int count_all = 0, count_resolved = 0;
  double mean_ecd_all_um = 0, mean_ecd_resolved_um = 0;
  double density_all_per_um2 = 0, density_resolved_per_um2 = 0;
  double area_fraction = 0;  ///< all sections in the field, border ones included
};

std::vector<TruthClassCount> count_truth_sections(const std::vector<TruthSection>& truth, const ScanGrid& grid,
                                                  double limit_um);

}  // namespace orderband
