// Orientation tables as CSV: row, col, phi1_deg, Phi_deg, phi2_deg, phase.
#pragma once

#include <istream>
#include <optional>
#include <ostream>
#include <string>
#include <vector>

#include "orderband/orientation_table.hpp"
#include "orderband/scan_grid.hpp"

namespace orderband {

/// Writes the CSV: a `#` provenance line (if given), the header
/// `row,col,phi1_deg,Phi_deg,phi2_deg,phase` and one line per point, angles
/// in degrees with 10 decimals (1e-10°): reading and writing again gives the
/// same text, and the same rotation to better than 1e-11 rad.
void write_orientation_csv(std::ostream& os, const ScanGrid& grid, const OrientationTable& table,
                           const std::string& provenance = "");

/// Reads the CSV and checks it against the grid: one line per point in scan
/// order, row/col matching, angles in range (φ1, φ2 ∈ [−360, 360], Φ ∈ [0, 180]),
/// `phase` optional. Errors name the file (`origin`), the line and the value.
OrientationTable read_orientation_csv(std::istream& is, const ScanGrid& grid, const std::string& origin);

}  // namespace orderband
