// An ordered/disordered phase pair and its per-family superlattice sensitivity.
#pragma once

#include <string>
#include <vector>

#include "orderband/phase.hpp"
#include "orderband/plane_family.hpp"

namespace orderband {

/// The ordered phase (e.g. γ′, L1₂) and its disordered parent (e.g. γ, fcc)
/// in the same cell setting, so that one (hkl) names the same planes in both.
struct OrderingPair {
  std::string name;
  Phase ordered;
  Phase disordered;
};

/// One family's numbers in both phases at one accelerating voltage.
struct PairFamily {
  PlaneFamily family;  ///< enumerated in the ordered phase
  double d_ordered_A = 0, d_disordered_A = 0;
  double bragg_ordered_rad = 0, bragg_disordered_rad = 0;
  double f_abs_ordered_A = 0, f_abs_disordered_A = 0;  ///< |F_hkl| (Å)
  /// Relative kinematic band intensity |F|² / max over families, per phase.
  double rel_intensity_ordered = 0, rel_intensity_disordered = 0;
  /// Superlattice sensitivity s = (|F_o|² − |F_d|²) / (|F_o|² + |F_d|²):
  /// +1 when the band exists only in the ordered phase, near 0 when the band
  /// is the same in both, −1 when it exists only in the disordered phase.
  double sensitivity = 0;
};

/// Checks that the two phases share a cell setting (same lattice system,
/// lengths within 5 %, angles within 0.5°); throws orderband::Error if not.
void check_pair_compatible(const OrderingPair& pair);

/// Families with d ≥ d_min_A that diffract in at least one phase
/// (|F| > 1e-6 of the strongest), sorted by decreasing d.
std::vector<PairFamily> pair_family_table(const OrderingPair& pair, double kilovolts, double d_min_A);

/// Families whose sensitivity is at least `threshold` (default 0.5): the
/// superlattice-sensitive families used by the ordered-phase signal.
std::vector<PairFamily> superlattice_families(const std::vector<PairFamily>& table, double threshold = 0.5);

/// Single-phase table row.
struct PhaseFamily {
  PlaneFamily family;
  double bragg_rad = 0;
  double f_abs_A = 0;
  double rel_intensity = 0;
};

/// Families of one phase with d ≥ d_min_A and |F| > 1e-6 of the strongest.
std::vector<PhaseFamily> phase_family_table(const Phase& phase, double kilovolts, double d_min_A);

}  // namespace orderband
