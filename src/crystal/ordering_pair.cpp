// Per-family structure factors of an ordered/disordered pair and their superlattice sensitivity.
#include "orderband/ordering_pair.hpp"

#include <algorithm>
#include <cmath>

#include "orderband/electron.hpp"
#include "orderband/error.hpp"
#include "orderband/scattering.hpp"

namespace orderband {
namespace {
constexpr double kExtinctionFraction = 1e-6;  // |F| below this share of the strongest counts as zero
}

void check_pair_compatible(const OrderingPair& pair) {
  const UnitCell& o = pair.ordered.cell;
  const UnitCell& d = pair.disordered.cell;
  const double lengths[3][2] = {{o.a_A, d.a_A}, {o.b_A, d.b_A}, {o.c_A, d.c_A}};
  const double angles[3][2] = {{o.alpha_deg, d.alpha_deg}, {o.beta_deg, d.beta_deg}, {o.gamma_deg, d.gamma_deg}};
  for (const auto& l : lengths)
    if (std::abs(l[0] / l[1] - 1) > 0.05)
      fail("phases '", pair.ordered.source, "' and '", pair.disordered.source,
           "' are not in the same cell setting (cell lengths ", l[0], " and ", l[1],
           " Å differ by more than 5 %); describe the disordered phase in the ordered phase's cell");
  for (const auto& a : angles)
    if (std::abs(a[0] - a[1]) > 0.5)
      fail("phases '", pair.ordered.source, "' and '", pair.disordered.source,
           "' are not in the same cell setting (cell angles ", a[0], " and ", a[1], "° differ)");
  if (pair.ordered.laue_class != pair.disordered.laue_class &&
      pair.ordered.point_group_ops.size() > pair.disordered.point_group_ops.size())
    fail("the ordered phase '", pair.ordered.source, "' has higher symmetry than the disordered phase '",
         pair.disordered.source, "'; check which file is which");
}

std::vector<PairFamily> pair_family_table(const OrderingPair& pair, double kilovolts, double d_min_A) {
  check_pair_compatible(pair);
  const double lambda = electron_wavelength_A(kilovolts);
  std::vector<PairFamily> rows;
  double max_o = 0, max_d = 0;
  for (PlaneFamily& fam : enumerate_plane_families(pair.ordered, d_min_A)) {
    PairFamily row;
    row.d_ordered_A = fam.d_A;
    row.d_disordered_A = pair.disordered.cell.d_spacing_A(fam.hkl);
    row.f_abs_ordered_A = std::abs(structure_factor_A(pair.ordered, fam.hkl));
    row.f_abs_disordered_A = std::abs(structure_factor_A(pair.disordered, fam.hkl));
    if (2 * row.d_ordered_A < lambda || 2 * row.d_disordered_A < lambda) continue;
    row.bragg_ordered_rad = bragg_angle_rad(row.d_ordered_A, lambda);
    row.bragg_disordered_rad = bragg_angle_rad(row.d_disordered_A, lambda);
    max_o = std::max(max_o, row.f_abs_ordered_A);
    max_d = std::max(max_d, row.f_abs_disordered_A);
    row.family = std::move(fam);
    rows.push_back(std::move(row));
  }
  std::vector<PairFamily> kept;
  for (PairFamily& r : rows) {
    const bool in_o = r.f_abs_ordered_A > kExtinctionFraction * max_o;
    const bool in_d = r.f_abs_disordered_A > kExtinctionFraction * max_d;
    if (!in_o && !in_d) continue;
    if (!in_o) r.f_abs_ordered_A = 0;
    if (!in_d) r.f_abs_disordered_A = 0;
    const double io = r.f_abs_ordered_A * r.f_abs_ordered_A;
    const double id = r.f_abs_disordered_A * r.f_abs_disordered_A;
    r.rel_intensity_ordered = io / (max_o * max_o);
    r.rel_intensity_disordered = id / (max_d * max_d);
    r.sensitivity = (io - id) / (io + id);
    if (std::abs(r.sensitivity) < 1e-9) r.sensitivity = 0.0;  // equal bands: no rounding noise
    kept.push_back(std::move(r));
  }
  return kept;
}

std::vector<PairFamily> superlattice_families(const std::vector<PairFamily>& table, double threshold) {
  std::vector<PairFamily> out;
  for (const PairFamily& r : table)
    if (r.sensitivity >= threshold) out.push_back(r);
  return out;
}

std::vector<PhaseFamily> phase_family_table(const Phase& phase, double kilovolts, double d_min_A) {
  const double lambda = electron_wavelength_A(kilovolts);
  std::vector<PhaseFamily> rows;
  double max_f = 0;
  for (PlaneFamily& fam : enumerate_plane_families(phase, d_min_A)) {
    if (2 * fam.d_A < lambda) continue;
    PhaseFamily row;
    row.f_abs_A = std::abs(structure_factor_A(phase, fam.hkl));
    row.bragg_rad = bragg_angle_rad(fam.d_A, lambda);
    max_f = std::max(max_f, row.f_abs_A);
    row.family = std::move(fam);
    rows.push_back(std::move(row));
  }
  std::vector<PhaseFamily> kept;
  for (PhaseFamily& r : rows) {
    if (r.f_abs_A <= kExtinctionFraction * max_f) continue;
    r.rel_intensity = r.f_abs_A * r.f_abs_A / (max_f * max_f);
    kept.push_back(std::move(r));
  }
  return kept;
}

}  // namespace orderband
