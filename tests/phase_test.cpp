// Reading phases from CIF: cells, space groups, unit-cell sites and clear errors.
#include "orderband/phase.hpp"

#include <gtest/gtest.h>

#include <Eigen/Dense>

#include "orderband/error.hpp"
#include "orderband/phase_cif.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

using test::crystal_data;

std::string minimal_cif(const std::string& cell, const std::string& group, const std::string& sites) {
  return "data_t\n" + cell + group +
         "loop_\n_atom_site_label\n_atom_site_type_symbol\n_atom_site_fract_x\n_atom_site_fract_y\n"
         "_atom_site_fract_z\n_atom_site_occupancy\n" +
         sites;
}
const std::string kCubicCell =
    "_cell_length_a 3.6\n_cell_length_b 3.6\n_cell_length_c 3.6\n"
    "_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90\n";

TEST(PhaseCif, ReadsShippedNi3Al) {
  const Phase p = load_phase_cif(crystal_data("ni3al-gamma-prime.cif"));
  EXPECT_EQ(p.space_group_number, 221);
  EXPECT_EQ(p.laue_class, "m-3m");
  EXPECT_NEAR(p.cell.a_A, 3.572, 1e-12);
  EXPECT_EQ(p.asymmetric_sites.size(), 2u);
  // Al on 1a (one image) + Ni on 3c (three images): 4 atoms, not 48 per site.
  ASSERT_EQ(p.unit_cell_sites.size(), 4u);
  int ni = 0;
  for (const auto& s : p.unit_cell_sites) ni += s.element == "Ni";
  EXPECT_EQ(ni, 3);
  EXPECT_NEAR(p.unit_cell_sites[0].u_iso_A2, 0.005, 1e-12);
  EXPECT_EQ(p.point_group_ops.size(), 48u);  // m-3m: 48 operations
}

TEST(PhaseCif, SpecialPositionsCountedOnceForFcc) {
  // fcc Ni: one site at 0,0,0 under F m -3 m (192 operations) gives 4 atoms.
  const Phase p = load_phase_cif(crystal_data("ni-fcc.cif"));
  EXPECT_EQ(p.unit_cell_sites.size(), 4u);
  // Mixed site: four species sharing 4a give 16 entries, occupancies summing to 4 atoms.
  const Phase g = load_phase_cif(crystal_data("ni-gamma.cif"));
  double atoms = 0;
  for (const auto& s : g.unit_cell_sites) atoms += s.occupancy;
  EXPECT_NEAR(atoms, 4.0, 1e-12);
}

TEST(PhaseCif, OrthogonalisationPutsAAlongX) {
  const UnitCell c(3.0, 4.0, 5.0, 80, 95, 110);
  EXPECT_NEAR((c.orth.col(0) - Eigen::Vector3d(3, 0, 0)).norm(), 0, 1e-12);
  EXPECT_NEAR(c.orth.col(1).z(), 0, 1e-12);  // b in the xy plane
  EXPECT_NEAR(c.orth.col(1).norm(), 4.0, 1e-12);
  EXPECT_NEAR(c.orth.col(2).norm(), 5.0, 1e-12);
  EXPECT_NEAR(std::acos(c.orth.col(0).normalized().dot(c.orth.col(1).normalized())) * 180 / M_PI, 110, 1e-9);
  EXPECT_NEAR(std::acos(c.orth.col(1).normalized().dot(c.orth.col(2).normalized())) * 180 / M_PI, 80, 1e-9);
  // d-spacing from the reciprocal metric equals the plane distance of (001): c·ẑ.
  EXPECT_NEAR(c.d_spacing_A({0, 0, 1}), c.orth.col(2).z(), 1e-12);
}

TEST(PhaseCif, SpaceGroupFromSymmetryOperationsAlone) {
  const std::string text = "data_b2\n" + kCubicCell +
                           "loop_\n_space_group_symop_operation_xyz\n'x,y,z'\n'-x,-y,z'\n'-x,y,-z'\n'x,-y,-z'\n"
                           "'z,x,y'\n'z,-x,-y'\n'-z,-x,y'\n'-z,x,-y'\n'y,z,x'\n'-y,z,-x'\n'y,-z,-x'\n'-y,-z,x'\n"
                           "loop_\n_atom_site_label\n_atom_site_type_symbol\n_atom_site_fract_x\n"
                           "_atom_site_fract_y\n_atom_site_fract_z\nFe1 Fe 0 0 0\n";
  const Phase p = parse_phase_cif(text, "ops.cif");
  EXPECT_EQ(p.space_group_number, 195);  // P 2 3
}

TEST(PhaseCif, ClearErrors) {
  auto message_of = [](auto&& fn) {
    try {
      fn();
    } catch (const Error& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  EXPECT_NE(message_of([] { load_phase_cif("/nonexistent/x.cif"); }).find("cannot read CIF file '/nonexistent/x.cif'"),
            std::string::npos);
  EXPECT_NE(message_of([] {
              parse_phase_cif(minimal_cif("", "_space_group_IT_number 225\n", "Ni1 Ni 0 0 0 1\n"), "a.cif");
            }).find("a.cif: no complete unit cell"),
            std::string::npos);
  EXPECT_NE(message_of([] {
              parse_phase_cif("data_x\n" + kCubicCell + "_space_group_IT_number 225\n", "b.cif");
            }).find("b.cif: no atom sites"),
            std::string::npos);
  EXPECT_NE(message_of([] {
              parse_phase_cif(minimal_cif(kCubicCell, "_space_group_IT_number 225\n", "Q1 Xx 0 0 0 1\n"), "c.cif");
            }).find("unknown element 'Xx'"),
            std::string::npos);
  EXPECT_NE(message_of([] {
              parse_phase_cif(minimal_cif(kCubicCell, "_space_group_name_H-M_alt 'Q 9 z'\n", "Ni1 Ni 0 0 0 1\n"),
                              "d.cif");
            }).find("unknown space group 'Q 9 z'"),
            std::string::npos);
  EXPECT_NE(message_of([] {
              parse_phase_cif(minimal_cif(kCubicCell, "", "Ni1 Ni 0 0 0 1\n"), "e.cif");
            }).find("no space group"),
            std::string::npos);
  EXPECT_NE(message_of([] {
              parse_phase_cif(minimal_cif(kCubicCell, "_space_group_IT_number 225\n", "Ni1 Ni 0 0 0 1.7\n"), "f.cif");
            }).find("occupancy 1.7"),
            std::string::npos);
  EXPECT_NE(message_of([] { parse_phase_cif("this is { not a cif", "g.cif"); }).find("g.cif"), std::string::npos);
  // Found by the CIF fuzz target: a space group number far outside int's range was cast (undefined).
  for (const char* number : {"1e300", "0", "231", "12.5", "-4"})
    EXPECT_NE(message_of([&] {
                parse_phase_cif(
                    minimal_cif(kCubicCell, std::string("_space_group_IT_number ") + number + "\n", "Ni1 Ni 0 0 0 1\n"),
                    "h.cif");
              }).find("is not a whole number from 1 to 230"),
              std::string::npos)
        << number;
}

TEST(PhaseCif, ImpossibleCellsCoordinatesAndSitesAreErrors) {
  // Each was once read without a word: γ = 0 as a 1 Å cube, NaN coordinates (|F| = nan or 0),
  // all sites empty, a 10⁶ Å cell (the family enumeration ran away).
  auto error_of = [](const std::string& cell, const std::string& sites) {
    try {
      parse_phase_cif(minimal_cif(cell, "_space_group_IT_number 225\n", sites), "x.cif");
    } catch (const Error& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  auto cell = [](const std::string& from, const std::string& to) {
    std::string c = kCubicCell;
    c.replace(c.find(from), from.size(), to);
    return c;
  };
  const std::string ni = "Ni1 Ni 0 0 0 1\n";
  EXPECT_NE(error_of(cell("_cell_angle_gamma 90", "_cell_angle_gamma 0"), ni).find("_cell_angle_gamma = 0"),
            std::string::npos);
  EXPECT_NE(error_of(cell("_cell_angle_alpha 90", "_cell_angle_alpha 180"), ni).find("outside (0, 180)"),
            std::string::npos);
  EXPECT_NE(error_of(cell("_cell_length_a 3.6", "_cell_length_a 1e6"), ni).find("outside [0.5, 100]"),
            std::string::npos);
  // 60°, 60°, 180° close the cell flat.
  EXPECT_NE(error_of(cell("_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90",
                          "_cell_angle_alpha 60\n_cell_angle_beta 60\n_cell_angle_gamma 120"),
                     ni)
                .find("give no cell"),
            std::string::npos);
  EXPECT_NE(error_of(kCubicCell, "Ni1 Ni nan 0 0 1\n").find("not a number"), std::string::npos)
      << error_of(kCubicCell, "Ni1 Ni nan 0 0 1\n");
  EXPECT_NE(error_of(kCubicCell, "Ni1 Ni 0 0 0 0\n").find("every site has occupancy 0"), std::string::npos);
  EXPECT_EQ(error_of(kCubicCell, ni), "no error");
}

}  // namespace
}  // namespace orderband
