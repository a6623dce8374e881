// Laue-group rotations: counts per Laue class, orthogonality, closure.
#include "orderband/laue_group.hpp"
#include "orderband/phase_cif.hpp"

#include <gtest/gtest.h>

#include <Eigen/Dense>

#include "test_support.hpp"

namespace orderband {
namespace {

Phase phase_with(const std::string& cell, const std::string& group) {
  return parse_phase_cif("data_t\n" + cell + group +
                             "loop_\n_atom_site_label\n_atom_site_type_symbol\n_atom_site_fract_x\n"
                             "_atom_site_fract_y\n_atom_site_fract_z\nX1 Fe 0.1 0.2 0.3\n",
                         "t.cif");
}

void expect_group(const std::vector<Eigen::Matrix3d>& g) {
  for (const auto& r : g) {
    EXPECT_NEAR((r * r.transpose() - Eigen::Matrix3d::Identity()).norm(), 0, 1e-9);
    EXPECT_NEAR(r.determinant(), 1.0, 1e-9);
    for (const auto& q : g) {  // closure under composition
      bool found = false;
      for (const auto& p : g) found = found || (p - r * q).norm() < 1e-9;
      EXPECT_TRUE(found);
    }
  }
}

TEST(LaueGroup, RotationCountsPerLaueClass) {
  // Orders of the rotation subgroups of the Laue classes (International Tables Vol. A, point-group tables).
  const Phase cubic = load_phase_cif(test::crystal_data("ni3al-gamma-prime.cif"));
  EXPECT_EQ(laue_rotations(cubic).size(), 24u);
  expect_group(laue_rotations(cubic));
  const Phase hex = phase_with(
      "_cell_length_a 3.21\n_cell_length_b 3.21\n_cell_length_c 5.21\n"
      "_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 120\n",
      "_space_group_name_H-M_alt 'P 63/m m c'\n");
  EXPECT_EQ(laue_rotations(hex).size(), 12u);
  expect_group(laue_rotations(hex));
  const Phase tet = phase_with(
      "_cell_length_a 2.7\n_cell_length_b 2.7\n_cell_length_c 3.7\n"
      "_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90\n",
      "_space_group_name_H-M_alt 'P 4/m m m'\n");
  EXPECT_EQ(laue_rotations(tet).size(), 8u);
  // A non-centrosymmetric group still gives its Laue group: P 2 3 (T) → m-3 has 12 rotations.
  const Phase t = phase_with(
      "_cell_length_a 3\n_cell_length_b 3\n_cell_length_c 3\n"
      "_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90\n",
      "_space_group_IT_number 195\n");
  EXPECT_EQ(laue_rotations(t).size(), 12u);
  EXPECT_TRUE(laue_rotations(t).front().isIdentity());
}

}  // namespace
}  // namespace orderband
